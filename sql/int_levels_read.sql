-- Intermediate: the levels panel as the methods read it (valvol.frames columns).
SELECT economy, item, price_basis, frequency, year, quarter, period, value
FROM levels;
