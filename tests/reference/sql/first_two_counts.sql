-- Digit-count table for digitdrift from a ledger CSV, in DuckDB (portable to other engines:
-- replace read_csv with your invoice table). One row per supplier and first-two digits.
-- The first-two digits are read from the exact decimal text of the amount, never from floating
-- point: DECIMAL(18,2) -> text -> drop the point and leading zeros -> first two characters.
-- Only positive amounts of at least 10.00 are counted, as digitdrift's default minimum.
WITH inv AS (
  SELECT trim("Supplier") AS supplier,
         TRY_CAST("Amount" AS DECIMAL(18, 2)) AS a
  FROM read_csv('{LEDGER}', header = true, all_varchar = true)
)
SELECT supplier,
       CAST(substr(ltrim(replace(CAST(a AS VARCHAR), '.', ''), '0'), 1, 2) AS INTEGER) AS first_two,
       count(*) AS invoices,
       sum(a) AS amount,
       min(a) AS amount_min,
       max(a) AS amount_max
FROM inv
WHERE a >= 10 AND supplier <> ''
GROUP BY ALL
ORDER BY supplier, first_two;
