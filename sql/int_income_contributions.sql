-- Intermediate: contributions of unit labour costs (ULC = D1/X), unit profits (UP = B2A3G/X), unit
-- net taxes (UT = D2X3/X) and the unit income discrepancy to GDP-deflator growth (pp), from
-- valvol.methods.deflator_contributions.income_side_contributions (docs/methods.md section 4.2).
CREATE OR REPLACE TABLE income_contributions AS
SELECT economy::VARCHAR AS economy, period::VARCHAR AS period, frequency::VARCHAR AS frequency, year::BIGINT AS year, quarter::BIGINT AS quarter, aggregate::VARCHAR AS aggregate,
       item::VARCHAR AS item, horizon::VARCHAR AS horizon, contribution_pp::DOUBLE AS contribution_pp,
       aggregate_growth_pct::DOUBLE AS aggregate_growth_pct, residual_pp::DOUBLE AS residual_pp
FROM contribution_rows;
