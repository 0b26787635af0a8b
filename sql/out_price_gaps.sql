-- Output: price gaps, terms of trade and trading gain, ordered by key.
SELECT economy, period, frequency, measure, horizon, value
FROM price_gaps
ORDER BY economy, measure, horizon, frequency, year, quarter;
