-- Output: implicit deflators (reference year average = 100), ordered by key.
SELECT economy, period, frequency, item, deflator
FROM deflators
ORDER BY economy, item, frequency, year, quarter;
