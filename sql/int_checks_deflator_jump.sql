-- Intermediate: plausibility of deflator movements: quarter-on-quarter deflator growth beyond
-- $jump_pct percent is a warning (common practice of release review; threshold configurable).
INSERT INTO checks
SELECT economy, period, 'deflator_jump', item, pct, $jump_pct,
       CASE WHEN abs(pct) <= $jump_pct THEN 'pass' ELSE 'warn' END
FROM growth
WHERE measure = 'price' AND horizon = 'prev_period' AND frequency = 'Q';
