-- Output: the published table deflator_contributions, stored in the vintage's own database for SQL users
-- (the same rows, in the same order, read from the vintage's deflator_contributions.parquet).
CREATE OR REPLACE TABLE deflator_contributions AS SELECT * FROM read_parquet($path);
