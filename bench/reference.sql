-- Hand-written reference query (c) for bench/testdata/spec10.toml, written
-- the way an expert would for DuckDB, independently of assay's compiler.
-- It must return the same columns and values as assay's main query.
--
-- Choices that make it fast:
--   * one GROUP BY over exposures finds each unit's trigger (its first
--     'home' exposure) and its crossover status (min(variant) = max(variant)),
--     with no window function and no second pass;
--   * one pass per outcome table, pre-aggregated to one row per unit before
--     any join with other tables;
--   * each distinct per-unit aggregate is computed once (orders_14d,
--     converted and the ratio's denominator share one count);
--   * the WHERE keeps only rows some aggregate reads (orders: delivered or
--     cancelled), so fewer rows reach the hash aggregate;
--   * each outcome scan carries the fixed time range any unit's window can
--     reach (first trigger - 28 days to last trigger + 14 days), so the
--     scan skips row groups outside it;
--   * per-unit sums are exact (DECIMAL(38, 10)), like assay's, so a total
--     that equals a threshold (engaged: duration above 600) is on the same
--     side of it in every run;
--   * timestamps are compared as TIMESTAMP with the trigger, with no
--     per-row conversion.
-- Times: exposures are read in [2026-03-02, 2026-04-13); a unit counts for a
-- metric when trigger + window end <= 2026-04-13 (the analysis end).
-- orders_14d's CUPED covariate is the same count in [trigger - 28d, trigger).
WITH
units AS (
  SELECT
    unit_id,
    min(variant) AS variant,
    min(exposed_at) FILTER (WHERE surface = 'home') AS trig
  FROM exposures
  WHERE unit_id IS NOT NULL
    AND exposed_at >= TIMESTAMP '2026-03-02 00:00:00'
    AND exposed_at < TIMESTAMP '2026-04-13 00:00:00'
  GROUP BY unit_id
  HAVING min(variant) = max(variant)
),
eligible AS (
  SELECT unit_id, variant, trig
  FROM units
  WHERE trig IS NOT NULL AND variant IN ('control', 'treatment')
),
order_units AS (
  SELECT
    o.unit_id,
    count(*) FILTER (WHERE o.status = 'delivered' AND o.ordered_at >= e.trig) AS delivered,
    CAST(sum(CAST(o.amount AS DECIMAL(38, 10))) FILTER (WHERE o.status = 'delivered' AND o.ordered_at >= e.trig) AS DOUBLE) AS revenue,
    count(*) FILTER (WHERE o.status = 'cancelled' AND o.ordered_at >= e.trig AND o.ordered_at < e.trig + INTERVAL 7 DAY) AS cancelled_7d,
    count(*) FILTER (WHERE o.status = 'delivered' AND o.ordered_at < e.trig) AS delivered_pre
  FROM orders AS o
  JOIN eligible AS e ON e.unit_id = o.unit_id
  WHERE o.ordered_at >= e.trig - INTERVAL 28 DAY AND o.ordered_at < e.trig + INTERVAL 14 DAY
    AND o.ordered_at >= TIMESTAMP '2026-02-02 00:00:00' AND o.ordered_at < TIMESTAMP '2026-04-27 00:00:00'
    AND o.status IN ('delivered', 'cancelled')
  GROUP BY o.unit_id
),
session_units AS (
  SELECT
    s.unit_id,
    count(*) AS sessions,
    CAST(sum(CAST(s.duration_s AS DECIMAL(38, 10))) AS DOUBLE) AS duration,
    count(DISTINCT s.page) AS pages
  FROM sessions AS s
  JOIN eligible AS e ON e.unit_id = s.unit_id
  WHERE s.started_at >= e.trig AND s.started_at < e.trig + INTERVAL 14 DAY
    AND s.started_at >= TIMESTAMP '2026-03-02 00:00:00' AND s.started_at < TIMESTAMP '2026-04-27 00:00:00'
  GROUP BY s.unit_id
),
unit_values AS (
  SELECT
    e.unit_id,
    e.variant,
    e.trig + INTERVAL 14 DAY <= TIMESTAMP '2026-04-13 00:00:00' AS mature_14d,
    e.trig + INTERVAL 7 DAY <= TIMESTAMP '2026-04-13 00:00:00' AS mature_7d,
    CAST(coalesce(o.delivered, 0) AS DOUBLE) AS delivered,
    coalesce(o.revenue, 0) AS revenue,
    CAST(coalesce(o.cancelled_7d, 0) AS DOUBLE) AS cancelled_7d,
    CAST(coalesce(o.delivered_pre, 0) AS DOUBLE) AS delivered_pre,
    CAST(coalesce(s.sessions, 0) AS DOUBLE) AS sessions,
    coalesce(s.duration, 0) AS duration,
    CAST(coalesce(s.pages, 0) AS DOUBLE) AS pages
  FROM eligible AS e
  LEFT JOIN order_units AS o ON o.unit_id = e.unit_id
  LEFT JOIN session_units AS s ON s.unit_id = e.unit_id
)
--NOTEBOOK-CUT
SELECT
  variant,
  count(*) AS units,
  count(*) FILTER (WHERE mature_14d) AS orders_14d__n,
  avg(delivered) FILTER (WHERE mature_14d) AS orders_14d__mean,
  var_samp(delivered) FILTER (WHERE mature_14d) AS orders_14d__var,
  avg(delivered_pre) FILTER (WHERE mature_14d) AS orders_14d__x_mean,
  var_samp(delivered_pre) FILTER (WHERE mature_14d) AS orders_14d__x_var,
  covar_samp(delivered, delivered_pre) FILTER (WHERE mature_14d) AS orders_14d__yx_cov,
  count(*) FILTER (WHERE mature_14d) AS revenue_14d__n,
  avg(revenue) FILTER (WHERE mature_14d) AS revenue_14d__mean,
  var_samp(revenue) FILTER (WHERE mature_14d) AS revenue_14d__var,
  count(*) FILTER (WHERE mature_14d) AS revenue_capped__n,
  avg(least(revenue, 400)) FILTER (WHERE mature_14d) AS revenue_capped__mean,
  var_samp(least(revenue, 400)) FILTER (WHERE mature_14d) AS revenue_capped__var,
  count(*) FILTER (WHERE mature_14d) AS converted__n,
  avg(CASE WHEN delivered > 0 THEN 1.0 ELSE 0.0 END) FILTER (WHERE mature_14d) AS converted__mean,
  var_samp(CASE WHEN delivered > 0 THEN 1.0 ELSE 0.0 END) FILTER (WHERE mature_14d) AS converted__var,
  count(*) FILTER (WHERE mature_14d) AS basket_value__n,
  avg(revenue) FILTER (WHERE mature_14d) AS basket_value__num_mean,
  avg(delivered) FILTER (WHERE mature_14d) AS basket_value__den_mean,
  var_samp(revenue) FILTER (WHERE mature_14d) AS basket_value__num_var,
  var_samp(delivered) FILTER (WHERE mature_14d) AS basket_value__den_var,
  covar_samp(revenue, delivered) FILTER (WHERE mature_14d) AS basket_value__cov,
  count(*) FILTER (WHERE mature_7d) AS cancelled_7d__n,
  avg(cancelled_7d) FILTER (WHERE mature_7d) AS cancelled_7d__mean,
  var_samp(cancelled_7d) FILTER (WHERE mature_7d) AS cancelled_7d__var,
  count(*) FILTER (WHERE mature_14d) AS sessions_14d__n,
  avg(sessions) FILTER (WHERE mature_14d) AS sessions_14d__mean,
  var_samp(sessions) FILTER (WHERE mature_14d) AS sessions_14d__var,
  count(*) FILTER (WHERE mature_14d) AS time_spent__n,
  avg(least(duration, 3600)) FILTER (WHERE mature_14d) AS time_spent__mean,
  var_samp(least(duration, 3600)) FILTER (WHERE mature_14d) AS time_spent__var,
  count(*) FILTER (WHERE mature_14d) AS pages_seen__n,
  avg(pages) FILTER (WHERE mature_14d) AS pages_seen__mean,
  var_samp(pages) FILTER (WHERE mature_14d) AS pages_seen__var,
  count(*) FILTER (WHERE mature_14d) AS engaged__n,
  avg(CASE WHEN duration > 600 THEN 1.0 ELSE 0.0 END) FILTER (WHERE mature_14d) AS engaged__mean,
  var_samp(CASE WHEN duration > 600 THEN 1.0 ELSE 0.0 END) FILTER (WHERE mature_14d) AS engaged__var
FROM unit_values
GROUP BY variant
ORDER BY variant
