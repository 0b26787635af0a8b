-- Intermediate: add checks computed by valvol methods (check_rows, registered by valvol.derive).
INSERT INTO checks
SELECT economy, period, rule, item, value::DOUBLE, tolerance::DOUBLE, status FROM check_rows;
