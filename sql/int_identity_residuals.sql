-- Intermediate: accounting identities of given aggregates, at current and previous-year prices:
-- residual = aggregate - sum(sign * component), tolerance = max($tol_abs, $tol_rel * sum |component|).
-- Checked where the economy has every component series at that price basis; a component missing
-- in one period counts as zero there.
CREATE OR REPLACE TABLE identity_residuals AS
WITH present AS (
    SELECT DISTINCT economy, item, price_basis FROM levels
),
complete AS (
    SELECT p.economy, h.aggregate, p.price_basis
    FROM stg_hierarchy AS h
    JOIN present AS p ON p.item = h.component
    GROUP BY p.economy, h.aggregate, p.price_basis
    HAVING count(*) = (SELECT count(*) FROM stg_hierarchy AS h2 WHERE h2.aggregate = h.aggregate)
),
sums AS (
    SELECT l.economy, h.aggregate, l.price_basis, l.frequency, l.year, l.quarter,
           fsum(h.sign * l.value) AS component_sum, fsum(abs(l.value)) AS gross
    FROM levels AS l
    JOIN stg_hierarchy AS h ON h.component = l.item
    WHERE l.price_basis IN ('current', 'previous_year')
    GROUP BY l.economy, h.aggregate, l.price_basis, l.frequency, l.year, l.quarter
)
SELECT a.economy, a.item, a.price_basis, a.frequency, a.year, a.quarter, a.period,
       a.value AS aggregate_value, s.component_sum,
       a.value - s.component_sum AS residual,
       greatest($tol_abs, $tol_rel * s.gross) AS tolerance
FROM levels AS a
JOIN complete AS c ON c.economy = a.economy AND c.aggregate = a.item AND c.price_basis = a.price_basis
JOIN sums AS s ON s.economy = a.economy AND s.aggregate = a.item AND s.price_basis = a.price_basis
               AND s.frequency = a.frequency AND s.year = a.year AND s.quarter = a.quarter
WHERE a.origin IN ('input', 'annual')
ORDER BY a.economy, a.item, a.price_basis, a.frequency, a.year, a.quarter;
