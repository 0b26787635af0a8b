-- Intermediate: checks that fail; any row stops the rebuild (nothing inconsistent is published).
SELECT economy, period, "check", item, value, tolerance
FROM checks
WHERE status = 'fail'
ORDER BY economy, "check", item, period;
