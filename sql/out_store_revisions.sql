-- Output: the published table revisions, stored in the vintage's own database for SQL users
-- (the same rows, in the same order, read from the vintage's revisions.parquet).
CREATE OR REPLACE TABLE revisions AS SELECT * FROM read_parquet($path);
