-- Output: the published table deflators, stored in the vintage's own database for SQL users
-- (the same rows, in the same order, read from the vintage's deflators.parquet).
CREATE OR REPLACE TABLE deflators AS SELECT * FROM read_parquet($path);
