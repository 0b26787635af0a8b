-- Intermediate: the growth table with its year and quarter, as valvol methods read it.
SELECT economy, period, frequency, year, quarter, item, measure, horizon, pct
FROM growth
ORDER BY economy, item, measure, horizon, frequency, year, quarter;
