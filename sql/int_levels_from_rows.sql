-- Intermediate: a levels table from rows a valvol method hands over (method_rows: the levels
-- columns and origin), for running the intermediate statements on a frame outside a rebuild.
CREATE OR REPLACE TABLE levels AS
SELECT economy::VARCHAR AS economy, item::VARCHAR AS item, price_basis::VARCHAR AS price_basis,
       frequency::VARCHAR AS frequency, year::BIGINT AS year, quarter::BIGINT AS quarter,
       period::VARCHAR AS period, value::DOUBLE AS value, origin::VARCHAR AS origin
FROM method_rows;
