-- Output: income-side contributions to GDP-deflator growth, ordered by key.
SELECT economy, period, frequency, aggregate, item, horizon, contribution_pp, aggregate_growth_pct, residual_pp
FROM income_contributions
ORDER BY economy, aggregate, horizon, frequency, year, quarter, item;
