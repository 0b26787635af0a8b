-- Output: the published table revision_summary, stored in the vintage's own database for SQL users
-- (the same rows, in the same order, read from the vintage's revision_summary.parquet).
CREATE OR REPLACE TABLE revision_summary AS SELECT * FROM read_parquet($path);
