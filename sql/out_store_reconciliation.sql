-- Output: the published table reconciliation, stored in the vintage's own database for SQL users
-- (the same rows, in the same order, read from the vintage's reconciliation.parquet).
CREATE OR REPLACE TABLE reconciliation AS SELECT * FROM read_parquet($path);
