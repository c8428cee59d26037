"""Reading: one column of a CSV, TSV, Excel or Parquet file, parsed and cleaned into a Sample.

=========================  ======================================================
Module                     What it holds
=========================  ======================================================
:mod:`.columns`            the column reader: read_column, read_labels,
                           list_numeric_columns
:mod:`.cells`              the cell rules: the number parser, classified cells,
                           the Sample made of them
:mod:`.files`              file kinds, the column rule, limits, names in messages
:mod:`.text_files`         CSV and TSV: encoding, delimiter, header, rows in blocks
:mod:`.excel`              Excel workbooks: package checks, sheets, typed cells
:mod:`.parquet`            Parquet files: data columns and typed cells
:mod:`.sample`             Sample: values, source rows, what was left out and why
=========================  ======================================================

The stream engine (:mod:`narrator.scale.sources`) reads through the same
modules' public names, so both engines apply the same rules.
"""
