-- Intermediate: add rows computed by a valvol method (chain-linked volumes, residual items) to the
-- levels panel. method_rows is a frame registered by valvol.derive with the levels columns + origin.
INSERT INTO levels
SELECT economy, item, price_basis, frequency, year::BIGINT, quarter::BIGINT, period, value::DOUBLE, origin
FROM method_rows;
