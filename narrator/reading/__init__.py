"""Reading: one column of a CSV, TSV, Excel or Parquet file, parsed and cleaned into a Sample.

=========================  ======================================================
Module                     What it holds
=========================  ======================================================
:mod:`.sample`             Sample: values, source rows, what was left out and why
:mod:`.columns`            the readers for each file kind and the number parser
=========================  ======================================================
"""
