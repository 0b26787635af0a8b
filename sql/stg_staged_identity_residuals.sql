-- Staging: the identity_residuals table staged once for the whole panel by the validate stage, reloaded
-- for one chunk of economies (staged_rows, registered by valvol.staging).
CREATE OR REPLACE TABLE identity_residuals AS SELECT * FROM staged_rows;
