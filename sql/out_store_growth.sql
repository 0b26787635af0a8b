-- Output: the published table growth, stored in the vintage's own database for SQL users
-- (the same rows, in the same order, read from the vintage's growth.parquet).
CREATE OR REPLACE TABLE growth AS SELECT * FROM read_parquet($path);
