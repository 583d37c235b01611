"""Intake stage: numbers from data files, checked before anything is fitted.

Modules, in the order they build on each other:

- ``options``: the reading options (separator, decimal mark, missing markers, encoding) and
  the one missing-value / number rule, checked in one place;
- ``files``: the path is a readable file, the wanted columns exist once (nearest-name hints);
- ``cells``: text cells and integer columns to float64, with the rule's errors;
- ``delimited`` and ``parquet``: the CSV/TSV and Parquet readers;
- ``tables``: several row-aligned columns (:func:`~samplewright.intake.tables.read_table`);
- ``columns``: one value column with weights / censoring flags
  (:func:`~samplewright.intake.columns.read_column`);
- ``knots``: points of a user-drawn CDF from CSV, YAML or command-line text.

Nothing is imported here, so that importing the package stays light.
"""
