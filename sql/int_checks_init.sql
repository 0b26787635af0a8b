-- Intermediate: the checks table (one row per evaluated check and period).
CREATE OR REPLACE TABLE checks (
    economy VARCHAR, period VARCHAR, rule VARCHAR, item VARCHAR,
    value DOUBLE, tolerance DOUBLE, status VARCHAR
);
