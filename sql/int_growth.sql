-- Intermediate: growth rates in percent, 100 * (x_t / x_base - 1), base > 0:
--   measure volume = chain-linked volume, value = current prices, price = implicit deflator;
--   horizon prev_period: previous quarter (quarters) or previous year (years);
--   horizon prev_year: same quarter a year earlier (quarters) or previous year (years).
-- Sign-changing items get no growth rate (docs/methods.md sections 2.4 and 3.6).
CREATE OR REPLACE TABLE growth AS
WITH series AS (
    SELECT economy, item, frequency, year, quarter, period,
           CASE price_basis WHEN 'chain_linked' THEN 'volume' ELSE 'value' END AS measure, value
    FROM levels
    WHERE price_basis IN ('chain_linked', 'current')
    UNION ALL
    SELECT economy, item, frequency, year, quarter, period, 'price' AS measure, deflator AS value
    FROM deflators
),
eligible AS (
    SELECT * FROM series
    WHERE NOT list_contains($sign_changing, item) AND NOT suffix(item, '_RESIDUAL')
),
bases AS (
    SELECT e.*, 'prev_period' AS horizon,
           CASE WHEN frequency = 'A' THEN year - 1 WHEN quarter = 1 THEN year - 1 ELSE year END AS base_year,
           CASE WHEN frequency = 'A' THEN 0 WHEN quarter = 1 THEN 4 ELSE quarter - 1 END AS base_quarter
    FROM eligible AS e
    UNION ALL
    SELECT e.*, 'prev_year' AS horizon, year - 1 AS base_year, quarter AS base_quarter
    FROM eligible AS e
)
SELECT b.economy, b.item, b.frequency, b.year, b.quarter, b.period, b.measure, b.horizon,
       100 * (b.value / p.value - 1) AS pct
FROM bases AS b
JOIN eligible AS p
  ON p.economy = b.economy AND p.item = b.item AND p.measure = b.measure
 AND p.frequency = b.frequency AND p.year = b.base_year AND p.quarter = b.base_quarter
WHERE p.value > 0 AND b.value > 0;
