-- Intermediate: price gaps, terms of trade and trading gain, from valvol.methods.price_gaps.
CREATE OR REPLACE TABLE price_gaps AS
SELECT economy::VARCHAR AS economy, period::VARCHAR AS period, frequency::VARCHAR AS frequency, year::BIGINT AS year, quarter::BIGINT AS quarter, measure::VARCHAR AS measure,
       horizon::VARCHAR AS horizon,
       value::DOUBLE AS value
FROM gap_rows;
