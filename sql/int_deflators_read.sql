-- Intermediate: the deflators table with its year and quarter, as valvol methods read it.
SELECT economy, period, frequency, year, quarter, item, deflator
FROM deflators
ORDER BY economy, item, frequency, year, quarter;
