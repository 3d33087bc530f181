-- Physical bound (b): one scan of each outcome table grouped by unit, with
-- no join and no filter. No correct answer can do less work than this, since
-- every metric needs each unit's rows brought together. The outer aggregates
-- keep DuckDB from skipping the grouping and return one small row.
SELECT o.order_rows, o.order_units, s.session_rows, s.session_units
FROM (
  SELECT sum(n) AS order_rows, count(*) AS order_units
  FROM (SELECT unit_id, count(*) AS n FROM orders GROUP BY unit_id)
) AS o
CROSS JOIN (
  SELECT sum(n) AS session_rows, count(*) AS session_units
  FROM (SELECT unit_id, count(*) AS n FROM sessions GROUP BY unit_id)
) AS s
