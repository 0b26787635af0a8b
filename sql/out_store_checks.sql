-- Output: the published table checks, stored in the vintage's own database for SQL users
-- (the same rows, in the same order, read from the vintage's checks.parquet).
CREATE OR REPLACE TABLE checks AS SELECT * FROM read_parquet($path);
