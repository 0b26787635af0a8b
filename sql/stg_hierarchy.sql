-- Staging: the signed hierarchy, one row per (aggregate, component); sign +1 or -1 (imports -1).
CREATE OR REPLACE TABLE stg_hierarchy AS
SELECT aggregate::VARCHAR AS aggregate, component::VARCHAR AS component, sign::INTEGER AS sign
FROM hierarchy_edges;
