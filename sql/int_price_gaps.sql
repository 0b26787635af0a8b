-- Intermediate: price gaps, terms of trade and trading gain, from valvol.methods.price_gaps.
CREATE OR REPLACE TABLE price_gaps AS
SELECT economy, period, frequency, year::BIGINT AS year, quarter::BIGINT AS quarter, measure, horizon,
       value::DOUBLE AS value
FROM gap_rows;
