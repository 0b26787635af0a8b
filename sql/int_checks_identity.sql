-- Intermediate: identity residuals of given aggregates as checks (identity_current,
-- identity_previous_year); inputs beyond tolerance never reach this point (they are rejected).
INSERT INTO checks
SELECT economy, period, 'identity_' || price_basis, item, residual, tolerance,
       CASE WHEN abs(residual) <= tolerance THEN 'pass' ELSE 'fail' END
FROM identity_residuals;
