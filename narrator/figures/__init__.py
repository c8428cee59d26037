"""Figures: findings and values in, finished pictures with captions and alt text out.

=========================  ======================================================
Module                     What it holds
=========================  ======================================================
:mod:`.rendered`           RenderedFigure, a finished figure (no plotting import)
:mod:`.charts`             the histogram, dot plot, with-and-without and
                           bin-sensitivity figures (matplotlib, Agg canvas)
:mod:`.group_chart`        the side-by-side figure of groups
:mod:`.helper_process`     the helper process that draws while the data are read
=========================  ======================================================

Importing this package imports no plotting library: only :mod:`.charts` and
:mod:`.group_chart` do, and the report imports them when it draws.
"""
