-- Output: the published table checks, stored in the vintage's own database for SQL users
-- (the same rows, in the same order, as checks.parquet).
CREATE OR REPLACE TABLE checks AS SELECT * FROM published_rows;
