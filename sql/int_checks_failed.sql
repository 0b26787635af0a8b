-- Intermediate: checks that fail; any row stops the rebuild (nothing inconsistent is published).
SELECT economy, period, rule, item, value, tolerance
FROM checks
WHERE status = 'fail'
ORDER BY economy, rule, item, period;
