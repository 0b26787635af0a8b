-- Intermediate: contributions to deflator growth (percentage points, imports negative), from
-- valvol.methods.deflator_contributions.
CREATE OR REPLACE TABLE deflator_contributions AS
SELECT economy::VARCHAR AS economy, period::VARCHAR AS period, frequency::VARCHAR AS frequency, year::BIGINT AS year, quarter::BIGINT AS quarter, aggregate::VARCHAR AS aggregate,
       item::VARCHAR AS item, horizon::VARCHAR AS horizon, contribution_pp::DOUBLE AS contribution_pp,
       aggregate_growth_pct::DOUBLE AS aggregate_growth_pct, residual_pp::DOUBLE AS residual_pp
FROM contribution_rows;
