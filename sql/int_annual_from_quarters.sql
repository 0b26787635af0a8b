-- Intermediate: annual values of every series from its complete years of quarters, where the
-- year is not given. Flows: annual = sum of the four quarters; levels at annual rate
-- ($annual_rate = true): annual = mean. Kahan summation (fsum) keeps results identical on rerun.
INSERT INTO levels
SELECT q.economy, q.item, q.price_basis, 'A', q.year, 0, CAST(q.year AS VARCHAR),
       CASE WHEN $annual_rate THEN fsum(q.value) / 4 ELSE fsum(q.value) END,
       'annual'
FROM levels AS q
WHERE q.frequency = 'Q'
  AND NOT EXISTS (
      SELECT 1 FROM levels AS a
      WHERE a.frequency = 'A' AND a.economy = q.economy AND a.item = q.item
        AND a.price_basis = q.price_basis AND a.year = q.year)
GROUP BY q.economy, q.item, q.price_basis, q.year
HAVING count(*) = 4;
