-- Output: growth rates in percent, ordered by key.
SELECT economy, period, frequency, item, measure, horizon, pct
FROM growth
ORDER BY economy, item, measure, horizon, frequency, year, quarter;
