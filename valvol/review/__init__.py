"""Review outputs of a vintage for people who do not read parquet: a workbook and a release report."""
