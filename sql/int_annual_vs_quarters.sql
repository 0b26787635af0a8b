-- Intermediate: given annual values against their four given quarters (sum, or mean when levels are at
-- annual rate), tolerance = max($tol_abs, $tol_rel * |annual|).
CREATE OR REPLACE TABLE annual_vs_quarters AS
SELECT a.economy, a.item, a.price_basis, a.year, a.period,
       a.value AS annual_value,
       CASE WHEN $annual_rate THEN fsum(q.value) / 4 ELSE fsum(q.value) END AS quarters_value,
       a.value - CASE WHEN $annual_rate THEN fsum(q.value) / 4 ELSE fsum(q.value) END AS residual,
       greatest($tol_abs, $tol_rel * abs(a.value)) AS tolerance
FROM levels AS a
JOIN levels AS q
  ON q.frequency = 'Q' AND q.origin = 'input' AND q.economy = a.economy AND q.item = a.item
 AND q.price_basis = a.price_basis AND q.year = a.year
WHERE a.frequency = 'A' AND a.origin = 'input'
GROUP BY a.economy, a.item, a.price_basis, a.year, a.period, a.value
HAVING count(*) = 4
ORDER BY a.economy, a.item, a.price_basis, a.year;
