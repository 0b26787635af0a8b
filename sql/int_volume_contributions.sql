-- Intermediate: contributions to volume growth (percentage points, component sign applied:
-- imports negative when import volumes rise), from valvol.methods.contributions.
CREATE OR REPLACE TABLE volume_contributions AS
SELECT economy::VARCHAR AS economy, period::VARCHAR AS period, frequency::VARCHAR AS frequency, year::BIGINT AS year, quarter::BIGINT AS quarter, aggregate::VARCHAR AS aggregate,
       item::VARCHAR AS item, horizon::VARCHAR AS horizon, contribution_pp::DOUBLE AS contribution_pp,
       aggregate_growth_pct::DOUBLE AS aggregate_growth_pct, residual_pp::DOUBLE AS residual_pp
FROM contribution_rows;
