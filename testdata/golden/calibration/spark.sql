-- assay 0.1.0 per-variant statistics query for experiment calibration (spec fingerprint 9bfc70270be2b2fd)
-- Times are compared as integer microseconds since 1970-01-01 UTC; timestamps without a zone are read as UTC.
-- Exposures are read in [2026-04-06T00:00:00Z, 2026-05-04T00:00:00Z); outcome windows must have ended by 2026-05-04T00:00:00Z.
WITH
-- Exposure rows of views inside the analysis window; rows without a unit or time are ignored.
exposure_rows AS (
  SELECT
    x.`visitor_id` AS unit_id,
    CAST(x.`arm` AS STRING) AS variant,
    unix_micros(x.`viewed_at`) AS ts_us,
    coalesce(x.`page` = 'product', FALSE) AS qualifies
  FROM `shop`.`page_views` AS x
  WHERE x.`visitor_id` IS NOT NULL AND x.`viewed_at` IS NOT NULL
    AND unix_micros(x.`viewed_at`) >= 1775433600000000 AND unix_micros(x.`viewed_at`) < 1777852800000000
),
-- One row per exposed unit: its first qualifying exposure (the trigger) and the least and
-- greatest variant it was seen in (when they differ, the unit crossed over). Rows without a
-- variant count for the trigger time but never decide the variant.
exposed_units AS (
  SELECT
    unit_id,
    min(CASE WHEN qualifies THEN ts_us END) AS trigger_us,
    min(variant) AS variant_lo,
    max(variant) AS variant_hi
  FROM exposure_rows
  GROUP BY unit_id
),
-- Trigger: each unit's first qualifying exposure (a row qualifies when: page = 'product').
-- A unit seen in one variant takes it; a crossover is reported under the least variant among
-- its qualifying rows at the trigger time.
triggers AS (
  SELECT u.unit_id, u.variant_lo AS variant, u.trigger_us, FALSE AS is_crossover
  FROM exposed_units AS u
  WHERE u.trigger_us IS NOT NULL AND NOT coalesce(u.variant_lo <> u.variant_hi, FALSE)
  UNION ALL
  SELECT u.unit_id, coalesce(min(r.variant), u.variant_lo) AS variant, u.trigger_us, TRUE AS is_crossover
  FROM exposed_units AS u
  JOIN exposure_rows AS r ON r.unit_id = u.unit_id AND r.ts_us = u.trigger_us AND r.qualifies
  WHERE coalesce(u.variant_lo <> u.variant_hi, FALSE)
  GROUP BY u.unit_id, u.trigger_us, u.variant_lo
),
-- Every triggered unit with the reasons it may be excluded.
cohort AS (
  SELECT
    t.unit_id,
    t.variant,
    t.trigger_us,
    CAST(timestamp_micros(t.trigger_us) AS DATE) AS trigger_day,
    t.is_crossover,
    (t.variant IS NULL OR t.variant NOT IN ('control', 'promise')) AS is_unknown_variant
  FROM triggers AS t
),
-- Eligible units: one variant only, a declared variant, and every eligibility rule met at the trigger.
eligible AS (
  SELECT c.unit_id, c.variant, c.trigger_us, c.trigger_day
  FROM cohort AS c
  WHERE NOT c.`is_crossover`
    AND NOT c.`is_unknown_variant`
),
-- One pass over orders for: m_orders, m_orders__x, m_order_value__num, m_order_value__den, m_order_value__x, m_ordered, m_ordered__x, m_cancellations.
`pass_orders` AS (
  SELECT
    r.unit_id,
    -- m_orders: count of rows where state <> 'test' in [trigger + 0d, trigger + 14d)
    count(CASE WHEN r.dt_us >= 0 AND r.dt_us < 1209600000000 AND (r.`c_state` <> 'test') THEN 1 END) AS `m_orders`,
    -- m_orders__x: count of rows where state <> 'test' in [trigger - 28d, trigger + 0d)
    count(CASE WHEN r.dt_us >= -2419200000000 AND r.dt_us < 0 AND (r.`c_state` <> 'test') THEN 1 END) AS `m_orders__x`,
    -- m_order_value__num: sum of total where state <> 'test' in [trigger + 0d, trigger + 14d)
    CAST(sum(CASE WHEN r.dt_us >= 0 AND r.dt_us < 1209600000000 AND (r.`c_state` <> 'test') AND CAST(r.`c_total` AS DOUBLE) - CAST(r.`c_total` AS DOUBLE) = 0 THEN CAST(CAST(r.`c_total` AS DOUBLE) AS DECIMAL(38, 10)) END) AS DOUBLE) AS `m_order_value__num`,
    count(CASE WHEN r.dt_us >= 0 AND r.dt_us < 1209600000000 AND (r.`c_state` <> 'test') AND NOT (CAST(r.`c_total` AS DOUBLE) - CAST(r.`c_total` AS DOUBLE) = 0) THEN 1 END) AS `m_order_value__num__nonfinite`,
    -- m_order_value__den: count of rows where state <> 'test' in [trigger + 0d, trigger + 14d): the same as m_orders
    -- m_order_value__x: sum of total where state <> 'test' in [trigger - 28d, trigger + 0d)
    CAST(sum(CASE WHEN r.dt_us >= -2419200000000 AND r.dt_us < 0 AND (r.`c_state` <> 'test') AND CAST(r.`c_total` AS DOUBLE) - CAST(r.`c_total` AS DOUBLE) = 0 THEN CAST(CAST(r.`c_total` AS DOUBLE) AS DECIMAL(38, 10)) END) AS DOUBLE) AS `m_order_value__x`,
    -- m_ordered: count of rows where state <> 'test' in [trigger + 0d, trigger + 14d): the same as m_orders
    -- m_ordered__x: count of rows where state <> 'test' in [trigger - 28d, trigger + 0d): the same as m_orders__x
    -- m_cancellations: count of rows where state = 'cancelled' in [trigger + 0d, trigger + 14d)
    count(CASE WHEN r.dt_us >= 0 AND r.dt_us < 1209600000000 AND (r.`c_state` = 'cancelled') THEN 1 END) AS `m_cancellations`
  FROM (
    SELECT e.unit_id, unix_micros(s.`placed_at`) - e.trigger_us AS dt_us, s.`state` AS `c_state`, s.`total` AS `c_total`
    FROM eligible AS e
    JOIN `shop`.`orders` AS s ON s.`visitor_id` = e.unit_id
  ) AS r
  WHERE r.dt_us >= -2419200000000 AND r.dt_us < 1209600000000
  GROUP BY r.unit_id
),
-- One row per eligible unit; a unit without outcome rows counts as zero.
unit_values AS (
  SELECT
    e.unit_id,
    e.variant,
    e.trigger_day,
    (e.trigger_us + 1209600000000 <= 1777852800000000) AS mature_14d,
    coalesce(p1.`m_orders`, 0) AS `m_orders`,
    coalesce(p1.`m_orders__x`, 0) AS `m_orders__x`,
    coalesce(p1.`m_order_value__num`, 0) AS `m_order_value__num`,
    coalesce(p1.`m_order_value__num__nonfinite`, 0) AS `m_order_value__num__nonfinite`,
    coalesce(p1.`m_orders`, 0) AS `m_order_value__den`,
    coalesce(p1.`m_order_value__x`, 0) AS `m_order_value__x`,
    coalesce(p1.`m_orders`, 0) AS `m_ordered`,
    coalesce(p1.`m_orders__x`, 0) AS `m_ordered__x`,
    coalesce(p1.`m_cancellations`, 0) AS `m_cancellations`
  FROM eligible AS e
  LEFT JOIN `pass_orders` AS p1 ON p1.unit_id = e.unit_id
),
-- Centres: pooled means (calibration groups mix the variants), subtracted before the variance
-- and covariance aggregates so their partial sums stay small.
centres AS (
  SELECT
    avg(CASE WHEN u.mature_14d THEN CAST(u.`m_orders` AS DOUBLE) END) AS `c_orders`,
    avg(CASE WHEN u.mature_14d THEN CAST(u.`m_orders__x` AS DOUBLE) END) AS `c_orders__x`,
    avg(CASE WHEN u.mature_14d THEN CAST(u.`m_order_value__num` AS DOUBLE) END) AS `c_order_value__num`,
    avg(CASE WHEN u.mature_14d THEN CAST(u.`m_order_value__den` AS DOUBLE) END) AS `c_order_value__den`,
    avg(CASE WHEN u.mature_14d THEN CAST(u.`m_order_value__x` AS DOUBLE) END) AS `c_order_value__x`,
    avg(CASE WHEN u.mature_14d THEN CAST(u.`m_cancellations` AS DOUBLE) END) AS `c_cancellations`
  FROM unit_values AS u
)
SELECT
  '9bfc70270be2b2fd' AS `spec_fingerprint`,
  'as_of=2026-05-04T00:00:00Z;splits=20;salt=7' AS `compile_options`,
  -- Calibration: each eligible unit is re-assigned at random in each of 20 splits (salt 7), with the planned weights.
  z.split AS `split`,
  CASE WHEN CAST(pmod(xxhash64(CAST(u.unit_id AS STRING), z.split, 7), 1000000) AS DOUBLE) / 1000000 < 0.5 THEN 'control' ELSE 'promise' END AS `variant`,
  count(*) AS `units`,
  -- orders (primary, mean): mean per unit of count of rows where state <> 'test'; window [trigger + 0d, trigger + 14d), mature units only
  count(CASE WHEN u.mature_14d THEN 1 END) AS `orders__n`,
  CASE WHEN min(CASE WHEN u.mature_14d THEN CAST(u.`m_orders` AS DOUBLE) END) = max(CASE WHEN u.mature_14d THEN CAST(u.`m_orders` AS DOUBLE) END) THEN min(CASE WHEN u.mature_14d THEN CAST(u.`m_orders` AS DOUBLE) END) ELSE min(c0.`c_orders`) + avg((CASE WHEN u.mature_14d THEN CAST(u.`m_orders` AS DOUBLE) END - c0.`c_orders`)) END AS `orders__mean`,
  var_samp((CASE WHEN u.mature_14d THEN CAST(u.`m_orders` AS DOUBLE) END - c0.`c_orders`)) AS `orders__var`,
  -- orders covariate: count of rows where state <> 'test' (definition of orders) in [trigger - 28d, trigger + 0d), before the trigger
  CASE WHEN min(CASE WHEN u.mature_14d THEN CAST(u.`m_orders__x` AS DOUBLE) END) = max(CASE WHEN u.mature_14d THEN CAST(u.`m_orders__x` AS DOUBLE) END) THEN min(CASE WHEN u.mature_14d THEN CAST(u.`m_orders__x` AS DOUBLE) END) ELSE min(c0.`c_orders__x`) + avg((CASE WHEN u.mature_14d THEN CAST(u.`m_orders__x` AS DOUBLE) END - c0.`c_orders__x`)) END AS `orders__x_mean`,
  var_samp((CASE WHEN u.mature_14d THEN CAST(u.`m_orders__x` AS DOUBLE) END - c0.`c_orders__x`)) AS `orders__x_var`,
  covar_samp((CASE WHEN u.mature_14d THEN CAST(u.`m_orders` AS DOUBLE) END - c0.`c_orders`), (CASE WHEN u.mature_14d THEN CAST(u.`m_orders__x` AS DOUBLE) END - c0.`c_orders__x`)) AS `orders__yx_cov`,
  -- order_value (secondary, ratio): per-unit sum of total where state <> 'test' over per-unit count of rows where state <> 'test'; window [trigger + 0d, trigger + 14d), mature units only
  count(CASE WHEN u.mature_14d THEN 1 END) AS `order_value__n`,
  CASE WHEN min(CASE WHEN u.mature_14d THEN CAST(u.`m_order_value__num` AS DOUBLE) END) = max(CASE WHEN u.mature_14d THEN CAST(u.`m_order_value__num` AS DOUBLE) END) THEN min(CASE WHEN u.mature_14d THEN CAST(u.`m_order_value__num` AS DOUBLE) END) ELSE min(c0.`c_order_value__num`) + avg((CASE WHEN u.mature_14d THEN CAST(u.`m_order_value__num` AS DOUBLE) END - c0.`c_order_value__num`)) END AS `order_value__num_mean`,
  CASE WHEN min(CASE WHEN u.mature_14d THEN CAST(u.`m_order_value__den` AS DOUBLE) END) = max(CASE WHEN u.mature_14d THEN CAST(u.`m_order_value__den` AS DOUBLE) END) THEN min(CASE WHEN u.mature_14d THEN CAST(u.`m_order_value__den` AS DOUBLE) END) ELSE min(c0.`c_order_value__den`) + avg((CASE WHEN u.mature_14d THEN CAST(u.`m_order_value__den` AS DOUBLE) END - c0.`c_order_value__den`)) END AS `order_value__den_mean`,
  var_samp((CASE WHEN u.mature_14d THEN CAST(u.`m_order_value__num` AS DOUBLE) END - c0.`c_order_value__num`)) AS `order_value__num_var`,
  var_samp((CASE WHEN u.mature_14d THEN CAST(u.`m_order_value__den` AS DOUBLE) END - c0.`c_order_value__den`)) AS `order_value__den_var`,
  covar_samp((CASE WHEN u.mature_14d THEN CAST(u.`m_order_value__num` AS DOUBLE) END - c0.`c_order_value__num`), (CASE WHEN u.mature_14d THEN CAST(u.`m_order_value__den` AS DOUBLE) END - c0.`c_order_value__den`)) AS `order_value__cov`,
  -- order_value covariate: sum of total where state <> 'test' (definition of order_value) in [trigger - 28d, trigger + 0d), before the trigger
  CASE WHEN min(CASE WHEN u.mature_14d THEN CAST(u.`m_order_value__x` AS DOUBLE) END) = max(CASE WHEN u.mature_14d THEN CAST(u.`m_order_value__x` AS DOUBLE) END) THEN min(CASE WHEN u.mature_14d THEN CAST(u.`m_order_value__x` AS DOUBLE) END) ELSE min(c0.`c_order_value__x`) + avg((CASE WHEN u.mature_14d THEN CAST(u.`m_order_value__x` AS DOUBLE) END - c0.`c_order_value__x`)) END AS `order_value__x_mean`,
  var_samp((CASE WHEN u.mature_14d THEN CAST(u.`m_order_value__x` AS DOUBLE) END - c0.`c_order_value__x`)) AS `order_value__x_var`,
  covar_samp((CASE WHEN u.mature_14d THEN CAST(u.`m_order_value__num` AS DOUBLE) END - c0.`c_order_value__num`), (CASE WHEN u.mature_14d THEN CAST(u.`m_order_value__x` AS DOUBLE) END - c0.`c_order_value__x`)) AS `order_value__num_x_cov`,
  covar_samp((CASE WHEN u.mature_14d THEN CAST(u.`m_order_value__den` AS DOUBLE) END - c0.`c_order_value__den`), (CASE WHEN u.mature_14d THEN CAST(u.`m_order_value__x` AS DOUBLE) END - c0.`c_order_value__x`)) AS `order_value__den_x_cov`,
  sum(u.`m_order_value__num__nonfinite`) AS `order_value__nonfinite_rows`,
  -- ordered (secondary, proportion): share of units whose count of rows where state <> 'test' is above 0; window [trigger + 0d, trigger + 14d), mature units only
  count(CASE WHEN u.mature_14d THEN 1 END) AS `ordered__n`,
  avg(CASE WHEN u.mature_14d THEN CASE WHEN u.`m_ordered` > 0 THEN CAST(1 AS DOUBLE) ELSE CAST(0 AS DOUBLE) END END) AS `ordered__mean`,
  var_samp(CASE WHEN u.mature_14d THEN CASE WHEN u.`m_ordered` > 0 THEN CAST(1 AS DOUBLE) ELSE CAST(0 AS DOUBLE) END END) AS `ordered__var`,
  -- ordered covariate: whether count of rows where state <> 'test' is above 0 (definition of ordered) in [trigger - 28d, trigger + 0d), before the trigger
  avg(CASE WHEN u.mature_14d THEN CASE WHEN u.`m_ordered__x` > 0 THEN CAST(1 AS DOUBLE) ELSE CAST(0 AS DOUBLE) END END) AS `ordered__x_mean`,
  var_samp(CASE WHEN u.mature_14d THEN CASE WHEN u.`m_ordered__x` > 0 THEN CAST(1 AS DOUBLE) ELSE CAST(0 AS DOUBLE) END END) AS `ordered__x_var`,
  covar_samp(CASE WHEN u.mature_14d THEN CASE WHEN u.`m_ordered` > 0 THEN CAST(1 AS DOUBLE) ELSE CAST(0 AS DOUBLE) END END, CASE WHEN u.mature_14d THEN CASE WHEN u.`m_ordered__x` > 0 THEN CAST(1 AS DOUBLE) ELSE CAST(0 AS DOUBLE) END END) AS `ordered__yx_cov`,
  -- cancellations (guard, mean): mean per unit of count of rows where state = 'cancelled'; window [trigger + 0d, trigger + 14d), mature units only
  count(CASE WHEN u.mature_14d THEN 1 END) AS `cancellations__n`,
  CASE WHEN min(CASE WHEN u.mature_14d THEN CAST(u.`m_cancellations` AS DOUBLE) END) = max(CASE WHEN u.mature_14d THEN CAST(u.`m_cancellations` AS DOUBLE) END) THEN min(CASE WHEN u.mature_14d THEN CAST(u.`m_cancellations` AS DOUBLE) END) ELSE min(c0.`c_cancellations`) + avg((CASE WHEN u.mature_14d THEN CAST(u.`m_cancellations` AS DOUBLE) END - c0.`c_cancellations`)) END AS `cancellations__mean`,
  var_samp((CASE WHEN u.mature_14d THEN CAST(u.`m_cancellations` AS DOUBLE) END - c0.`c_cancellations`)) AS `cancellations__var`
FROM unit_values AS u
CROSS JOIN centres AS c0
CROSS JOIN (SELECT explode(sequence(0, 19)) AS split) AS z
GROUP BY z.split, CASE WHEN CAST(pmod(xxhash64(CAST(u.unit_id AS STRING), z.split, 7), 1000000) AS DOUBLE) / 1000000 < 0.5 THEN 'control' ELSE 'promise' END
ORDER BY `split`, `variant`
;

-- assay 0.1.0 health query for experiment calibration (spec fingerprint 9bfc70270be2b2fd)
-- Times are compared as integer microseconds since 1970-01-01 UTC; timestamps without a zone are read as UTC.
-- Exposures are read in [2026-04-06T00:00:00Z, 2026-05-04T00:00:00Z); outcome windows must have ended by 2026-05-04T00:00:00Z.
WITH
-- Exposure rows of views inside the analysis window; rows without a unit or time are ignored.
exposure_rows AS (
  SELECT
    x.`visitor_id` AS unit_id,
    CAST(x.`arm` AS STRING) AS variant,
    unix_micros(x.`viewed_at`) AS ts_us,
    coalesce(x.`page` = 'product', FALSE) AS qualifies
  FROM `shop`.`page_views` AS x
  WHERE x.`visitor_id` IS NOT NULL AND x.`viewed_at` IS NOT NULL
    AND unix_micros(x.`viewed_at`) >= 1775433600000000 AND unix_micros(x.`viewed_at`) < 1777852800000000
),
-- One row per exposed unit: its first qualifying exposure (the trigger) and the least and
-- greatest variant it was seen in (when they differ, the unit crossed over). Rows without a
-- variant count for the trigger time but never decide the variant.
exposed_units AS (
  SELECT
    unit_id,
    min(CASE WHEN qualifies THEN ts_us END) AS trigger_us,
    min(variant) AS variant_lo,
    max(variant) AS variant_hi
  FROM exposure_rows
  GROUP BY unit_id
),
-- Trigger: each unit's first qualifying exposure (a row qualifies when: page = 'product').
-- A unit seen in one variant takes it; a crossover is reported under the least variant among
-- its qualifying rows at the trigger time.
triggers AS (
  SELECT u.unit_id, u.variant_lo AS variant, u.trigger_us, FALSE AS is_crossover
  FROM exposed_units AS u
  WHERE u.trigger_us IS NOT NULL AND NOT coalesce(u.variant_lo <> u.variant_hi, FALSE)
  UNION ALL
  SELECT u.unit_id, coalesce(min(r.variant), u.variant_lo) AS variant, u.trigger_us, TRUE AS is_crossover
  FROM exposed_units AS u
  JOIN exposure_rows AS r ON r.unit_id = u.unit_id AND r.ts_us = u.trigger_us AND r.qualifies
  WHERE coalesce(u.variant_lo <> u.variant_hi, FALSE)
  GROUP BY u.unit_id, u.trigger_us, u.variant_lo
),
-- Every triggered unit with the reasons it may be excluded.
cohort AS (
  SELECT
    t.unit_id,
    t.variant,
    t.trigger_us,
    CAST(timestamp_micros(t.trigger_us) AS DATE) AS trigger_day,
    t.is_crossover,
    (t.variant IS NULL OR t.variant NOT IN ('control', 'promise')) AS is_unknown_variant
  FROM triggers AS t
),
-- Exposure rows outside the analysis window, or without a unit or time.
ignored_rows AS (
  SELECT
    count(CASE WHEN x.`visitor_id` IS NULL THEN 1 END) AS null_unit,
    count(CASE WHEN x.`viewed_at` IS NULL THEN 1 END) AS null_time,
    count(CASE WHEN unix_micros(x.`viewed_at`) < 1775433600000000 THEN 1 END) AS before_start,
    count(CASE WHEN unix_micros(x.`viewed_at`) >= 1777852800000000 THEN 1 END) AS after_end
  FROM `shop`.`page_views` AS x
),
-- Exposure rows in the window without a variant: they count for the trigger time only.
variantless_rows AS (
  SELECT count(*) - count(variant) AS null_variant FROM exposure_rows
),
-- Undeclared variant values of triggered units, the 10 with the most units.
unknown_values AS (
  SELECT v.variant, v.units FROM (
    SELECT c.variant, count(*) AS units,
      row_number() OVER (ORDER BY count(*) DESC, c.variant) AS value_rank
    FROM cohort AS c
    WHERE c.is_unknown_variant AND c.variant IS NOT NULL AND NOT c.is_crossover
    GROUP BY c.variant
  ) AS v
  WHERE v.value_rank <= 10
),
-- Rows of orders that no metric or rule can use: no unit or no time.
nulls_1 AS (
  SELECT count(*) - count(s.`visitor_id`) AS null_unit, count(*) - count(s.`placed_at`) AS null_time
  FROM `shop`.`orders` AS s
),
-- Eligible units: one variant only, a declared variant, and every eligibility rule met at the trigger.
eligible AS (
  SELECT c.unit_id, c.variant, c.trigger_us, c.trigger_day
  FROM cohort AS c
  WHERE NOT c.`is_crossover`
    AND NOT c.`is_unknown_variant`
),
-- Each unit's latest row of orders in the analysis period before the as-of time.
last_1 AS (
  SELECT s.`visitor_id` AS unit_id, max(unix_micros(s.`placed_at`)) AS last_us
  FROM `shop`.`orders` AS s
  WHERE s.`visitor_id` IS NOT NULL AND unix_micros(s.`placed_at`) >= 1775433600000000 AND unix_micros(s.`placed_at`) < 1777852800000000
  GROUP BY s.`visitor_id`
),
-- Per variant: eligible units, and those with no row from their trigger up to the as-of time in any
-- outcome source.
no_outcomes AS (
  SELECT
    e.variant,
    count(*) AS eligible_units,
    count(CASE WHEN (o1.last_us IS NULL OR o1.last_us < e.trigger_us) THEN 1 END) AS none_any
  FROM eligible AS e
  LEFT JOIN last_1 AS o1 ON o1.unit_id = e.unit_id
  GROUP BY e.variant
)
SELECT h.kind, h.reason, h.source, h.variant, h.day, h.row_count, h.unit_count FROM (
  SELECT 'exposures' AS kind, NULL AS reason, NULL AS source, variant AS variant, CAST(timestamp_micros(ts_us) AS DATE) AS day, count(*) AS row_count, count(DISTINCT unit_id) AS unit_count
  FROM exposure_rows
  GROUP BY variant, CAST(timestamp_micros(ts_us) AS DATE)
  UNION ALL
  SELECT 'triggers' AS kind, NULL AS reason, NULL AS source, variant AS variant, trigger_day AS day, count(*) AS row_count, count(*) AS unit_count
  FROM cohort
  GROUP BY variant, trigger_day
  UNION ALL
  SELECT 'never_triggered' AS kind, NULL AS reason, NULL AS source, NULL AS variant, NULL AS day, count(*) AS row_count, count(*) AS unit_count
  FROM exposed_units AS u
  WHERE u.trigger_us IS NULL
  UNION ALL
  SELECT 'excluded' AS kind, 'crossover' AS reason, NULL AS source, variant AS variant, NULL AS day, count(*) AS row_count, count(*) AS unit_count
  FROM cohort
  WHERE `is_crossover`
  GROUP BY variant
  UNION ALL
  SELECT 'excluded' AS kind, 'unknown_variant' AS reason, NULL AS source, variant AS variant, NULL AS day, count(*) AS row_count, count(*) AS unit_count
  FROM cohort
  WHERE `is_unknown_variant`
  GROUP BY variant
  UNION ALL
  SELECT 'excluded' AS kind, 'any' AS reason, NULL AS source, variant AS variant, NULL AS day, count(*) AS row_count, count(*) AS unit_count
  FROM cohort
  WHERE `is_crossover` OR `is_unknown_variant`
  GROUP BY variant
  UNION ALL
  SELECT 'ignored_rows' AS kind, 'null_unit' AS reason, NULL AS source, NULL AS variant, NULL AS day, null_unit AS row_count, NULL AS unit_count
  FROM ignored_rows
  UNION ALL
  SELECT 'ignored_rows' AS kind, 'null_time' AS reason, NULL AS source, NULL AS variant, NULL AS day, null_time AS row_count, NULL AS unit_count
  FROM ignored_rows
  UNION ALL
  SELECT 'ignored_rows' AS kind, 'null_variant' AS reason, NULL AS source, NULL AS variant, NULL AS day, null_variant AS row_count, NULL AS unit_count
  FROM variantless_rows
  UNION ALL
  SELECT 'ignored_rows' AS kind, 'before_start' AS reason, NULL AS source, NULL AS variant, NULL AS day, before_start AS row_count, NULL AS unit_count
  FROM ignored_rows
  UNION ALL
  SELECT 'ignored_rows' AS kind, 'after_end' AS reason, NULL AS source, NULL AS variant, NULL AS day, after_end AS row_count, NULL AS unit_count
  FROM ignored_rows
  UNION ALL
  SELECT 'ignored_outcome_rows' AS kind, 'null_unit' AS reason, 'orders' AS source, NULL AS variant, NULL AS day, null_unit AS row_count, NULL AS unit_count
  FROM nulls_1
  UNION ALL
  SELECT 'ignored_outcome_rows' AS kind, 'null_time' AS reason, 'orders' AS source, NULL AS variant, NULL AS day, null_time AS row_count, NULL AS unit_count
  FROM nulls_1
  UNION ALL
  SELECT 'unknown_variant' AS kind, NULL AS reason, NULL AS source, variant AS variant, NULL AS day, units AS row_count, units AS unit_count
  FROM unknown_values
  UNION ALL
  SELECT 'no_outcome_rows' AS kind, NULL AS reason, NULL AS source, variant AS variant, NULL AS day, eligible_units AS row_count, none_any AS unit_count
  FROM no_outcomes
) AS h
ORDER BY h.kind, h.reason, h.source, h.variant, h.day
;
