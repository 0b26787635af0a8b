-- Output: item contributions to the effects of the price bridge, ordered by key.
SELECT economy, period, frequency, horizon, "order", effect, item, value_pp
FROM price_bridge_items
ORDER BY economy, "order", effect, item, horizon, frequency, year, quarter;
