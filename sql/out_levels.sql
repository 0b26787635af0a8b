-- Output: levels (inputs plus derived annual values, aggregates and volumes), ordered by key.
SELECT economy, period, frequency, item, price_basis, value
FROM levels
ORDER BY economy, item, price_basis, frequency, year, quarter;
