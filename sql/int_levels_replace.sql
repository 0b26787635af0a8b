-- Intermediate: replace given chain-linked volumes of the economies in method_rows by their
-- re-referenced values (same key, origin 'rereferenced').
DELETE FROM levels AS l
WHERE l.price_basis = 'chain_linked'
  AND EXISTS (SELECT 1 FROM method_rows AS m
              WHERE m.economy = l.economy AND m.item = l.item AND m.frequency = l.frequency
                AND m.year = l.year AND m.quarter = l.quarter);
