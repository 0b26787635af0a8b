-- Intermediate: the distinct item codes of the levels panel (to tell the sign-changing ones).
SELECT DISTINCT item FROM levels ORDER BY item;
