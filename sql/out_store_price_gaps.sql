-- Output: the published table price_gaps, stored in the vintage's own database for SQL users
-- (the same rows, in the same order, read from the vintage's price_gaps.parquet).
CREATE OR REPLACE TABLE price_gaps AS SELECT * FROM read_parquet($path);
