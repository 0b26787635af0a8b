-- Output: the CPI-to-household-deflator bridge, ordered by key.
SELECT economy, period, frequency, horizon, "order", effect, value_pp
FROM price_bridge
ORDER BY economy, "order", effect, horizon, frequency, year, quarter;
