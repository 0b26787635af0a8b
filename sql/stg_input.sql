-- Staging: the validated input rows, typed, become the first rows of the working levels panel
-- (input_rows is a frame registered by valvol.staging, already parsed and validated).
-- origin: input | annual (sum or mean of quarters) | aggregate (signed sum) | chain_linked | rereferenced
CREATE OR REPLACE TABLE levels AS
SELECT
    economy::VARCHAR      AS economy,
    item::VARCHAR         AS item,
    price_basis::VARCHAR  AS price_basis,
    frequency::VARCHAR    AS frequency,
    year::BIGINT          AS year,
    quarter::BIGINT       AS quarter,
    period::VARCHAR       AS period,
    value::DOUBLE         AS value,           -- unit of the accounts, as given
    'input'               AS origin
FROM input_rows;
