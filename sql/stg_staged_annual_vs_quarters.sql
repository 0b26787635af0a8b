-- Staging: the annual_vs_quarters table staged once for the whole panel by the validate stage, reloaded
-- for one chunk of economies (staged_rows, registered by valvol.staging).
CREATE OR REPLACE TABLE annual_vs_quarters AS SELECT * FROM staged_rows;
