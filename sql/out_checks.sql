-- Output: every evaluated check, ordered (failures and warnings are also counted in the manifest).
SELECT economy, period, rule, item, value, tolerance, status
FROM checks
ORDER BY economy, rule, item, period;
