"""narrator.places: your own Word document, kept current.

=============================  ================================================
Module                         What it holds
=============================  ================================================
:mod:`~narrator.places.tags`   the tag (``narrator:<target>[@variable]``) and marker syntax
:mod:`~narrator.places.package` the .docx package: content controls found, filled, made
:mod:`~narrator.places.fill`   ``narrator fill`` and ``narrator mark``: the runners
=============================  ================================================
"""
