-- Intermediate: a deflators table from given rows (deflator_rows: economy, item, frequency, year,
-- quarter, period, deflator), for computing their growth with int_growth outside a rebuild.
CREATE OR REPLACE TABLE deflators AS
SELECT economy::VARCHAR AS economy, item::VARCHAR AS item, frequency::VARCHAR AS frequency,
       year::BIGINT AS year, quarter::BIGINT AS quarter, period::VARCHAR AS period, deflator::DOUBLE AS deflator
FROM deflator_rows;
