-- Output: the published table income_contributions, stored in the vintage's own database for SQL users
-- (the same rows, in the same order, read from the vintage's income_contributions.parquet).
CREATE OR REPLACE TABLE income_contributions AS SELECT * FROM read_parquet($path);
