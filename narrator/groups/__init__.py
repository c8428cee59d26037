"""Groups: several variables or one variable by groups from one file, with privacy suppression.

=========================  ======================================================
Module                     What it holds
=========================  ======================================================
:mod:`.analysis`           requests per variable, the split by group, suppression
                           of small groups, and the Collection of findings
=========================  ======================================================
"""
