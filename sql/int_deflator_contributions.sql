-- Intermediate: contributions to deflator growth (percentage points, imports negative), from
-- valvol.methods.deflator_contributions.
CREATE OR REPLACE TABLE deflator_contributions AS
SELECT economy, period, frequency, year::BIGINT AS year, quarter::BIGINT AS quarter, aggregate, item,
       horizon, contribution_pp::DOUBLE AS contribution_pp,
       aggregate_growth_pct::DOUBLE AS aggregate_growth_pct, residual_pp::DOUBLE AS residual_pp
FROM contribution_rows;
