-- Intermediate: given years against their quarters, as checks annual_vs_quarters_<price_basis>.
INSERT INTO checks
SELECT economy, period, 'annual_vs_quarters_' || price_basis, item, residual, tolerance,
       CASE WHEN abs(residual) <= tolerance THEN 'pass' ELSE 'fail' END
FROM annual_vs_quarters;
