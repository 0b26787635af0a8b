-- Output: the published table price_bridge, stored in the vintage's own database for SQL users
-- (the same rows, in the same order, read from the vintage's price_bridge.parquet).
CREATE OR REPLACE TABLE price_bridge AS SELECT * FROM read_parquet($path);
