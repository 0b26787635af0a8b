-- Output: the published table income_contributions, stored in the vintage's own database for SQL users
-- (the same rows, in the same order, as income_contributions.parquet).
CREATE OR REPLACE TABLE income_contributions AS SELECT * FROM published_rows;
