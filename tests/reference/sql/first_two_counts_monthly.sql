-- Monthly digit-count table for `digitdrift watch`, in DuckDB (portable to other engines:
-- replace read_csv with your invoice table and strftime with your engine's date formatting).
-- One row per supplier, month and first-two digits; `period` is written YYYY-MM.
-- The first-two digits are read from the exact decimal text of the amount, never from floating
-- point: DECIMAL(18,2) -> text -> drop the point and leading zeros -> first two characters.
-- Only positive amounts of at least 10.00 with a readable date are counted.
WITH inv AS (
  SELECT trim("Supplier") AS supplier,
         TRY_CAST("Invoice Date" AS DATE) AS d,
         TRY_CAST("Amount" AS DECIMAL(18, 2)) AS a
  FROM read_csv('{LEDGER}', header = true, all_varchar = true)
)
SELECT supplier,
       strftime(d, '%Y-%m') AS period,
       CAST(substr(ltrim(replace(CAST(a AS VARCHAR), '.', ''), '0'), 1, 2) AS INTEGER) AS first_two,
       count(*) AS invoices,
       sum(a) AS amount
FROM inv
WHERE a >= 10 AND supplier <> '' AND d IS NOT NULL
GROUP BY ALL
ORDER BY supplier, period, first_two;
