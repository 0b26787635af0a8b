-- Staging: the validated input rows, typed. Source of every later table.
-- input_rows is a frame registered by valvol.pipeline (already parsed and validated).
CREATE OR REPLACE TABLE stg_input AS
SELECT
    economy::VARCHAR      AS economy,
    item::VARCHAR         AS item,
    price_basis::VARCHAR  AS price_basis,
    frequency::VARCHAR    AS frequency,
    year::BIGINT          AS year,
    quarter::BIGINT       AS quarter,
    period::VARCHAR       AS period,
    value::DOUBLE         AS value,           -- unit of the accounts, as given
    source_file::VARCHAR  AS source_file,
    source_row::BIGINT    AS source_row
FROM input_rows;
