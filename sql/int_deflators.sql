-- Intermediate: implicit deflators = 100 * current / chain-linked volume (reference year = 100),
-- annual from annual values (not the mean of quarterly deflators). None for sign-changing items
-- ($sign_changing), residual items, or where either level is not positive.
-- Source: docs/methods.md section 1 (BEA and ONS definitions of the implicit deflator).
CREATE OR REPLACE TABLE deflators AS
SELECT c.economy, c.item, c.frequency, c.year, c.quarter, c.period,
       100 * c.value / v.value AS deflator
FROM levels AS c
JOIN levels AS v
  ON v.price_basis = 'chain_linked' AND v.economy = c.economy AND v.item = c.item
 AND v.frequency = c.frequency AND v.year = c.year AND v.quarter = c.quarter
WHERE c.price_basis = 'current'
  AND NOT list_contains($sign_changing, c.item)
  AND NOT suffix(c.item, '_RESIDUAL')
  AND c.value > 0 AND v.value > 0;
