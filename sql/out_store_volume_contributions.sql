-- Output: the published table volume_contributions, stored in the vintage's own database for SQL users
-- (the same rows, in the same order, read from the vintage's volume_contributions.parquet).
CREATE OR REPLACE TABLE volume_contributions AS SELECT * FROM read_parquet($path);
