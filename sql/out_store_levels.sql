-- Output: the published table levels, stored in the vintage's own database for SQL users
-- (the same rows, in the same order, read from the vintage's levels.parquet).
CREATE OR REPLACE TABLE levels AS SELECT * FROM read_parquet($path);
