-- Intermediate: the CPI-to-household-deflator bridge, from valvol.methods.price_bridge.
CREATE OR REPLACE TABLE price_bridge AS
SELECT economy::VARCHAR AS economy, period::VARCHAR AS period, frequency::VARCHAR AS frequency,
       year::BIGINT AS year, quarter::BIGINT AS quarter, horizon::VARCHAR AS horizon, "order"::VARCHAR AS "order",
       effect::VARCHAR AS effect, value_pp::DOUBLE AS value_pp
FROM bridge_rows;
