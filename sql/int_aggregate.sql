-- Intermediate: one aggregate ($aggregate) as the signed sum of its components, at current and
-- previous-year prices only (chain-linked components are never summed), for every period where
-- the aggregate is not given and at least one component is present. A component missing in a
-- period counts as zero there (a series may start later than others).
INSERT INTO levels
SELECT l.economy, h.aggregate, l.price_basis, l.frequency, l.year, l.quarter, l.period,
       fsum(h.sign * l.value), 'aggregate'
FROM levels AS l
JOIN stg_hierarchy AS h ON h.component = l.item
WHERE h.aggregate = $aggregate
  AND l.price_basis IN ('current', 'previous_year')
  AND NOT EXISTS (
      SELECT 1 FROM levels AS g
      WHERE g.item = h.aggregate AND g.economy = l.economy AND g.price_basis = l.price_basis
        AND g.frequency = l.frequency AND g.year = l.year AND g.quarter = l.quarter)
GROUP BY l.economy, h.aggregate, l.price_basis, l.frequency, l.year, l.quarter, l.period;
