-- Intermediate: the working levels panel starts as the input rows.
-- origin: input | annual (sum or mean of quarters) | aggregate (signed sum) | chain_linked | rereferenced
CREATE OR REPLACE TABLE levels AS
SELECT economy, item, price_basis, frequency, year, quarter, period, value, 'input' AS origin
FROM stg_input;
