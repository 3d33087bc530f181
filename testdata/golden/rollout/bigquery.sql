-- assay 0.1.0 per-variant statistics query for experiment ramp (spec fingerprint 2983d6892f858269)
-- Times are compared as integer microseconds since 1970-01-01 UTC; timestamps without a zone are read as Europe/Lisbon.
-- Exposures are read in [2026-05-31T23:00:00Z, 2026-06-28T23:00:00Z); outcome windows must have ended by 2026-06-28T23:00:00Z.
WITH
-- Exposure rows of visits inside the analysis window; rows without a unit or time are ignored.
exposure_rows AS (
  SELECT
    x.`visitor_id` AS unit_id,
    CAST(x.`arm` AS STRING) AS variant,
    UNIX_MICROS(TIMESTAMP(x.`viewed_at`, 'Europe/Lisbon')) AS ts_us,
    TRUE AS qualifies,
    x.`device` AS `seg_device`
  FROM `web`.`basket_views` AS x
  WHERE x.`visitor_id` IS NOT NULL AND x.`viewed_at` IS NOT NULL
    AND UNIX_MICROS(TIMESTAMP(x.`viewed_at`, 'Europe/Lisbon')) >= 1780268400000000 AND UNIX_MICROS(TIMESTAMP(x.`viewed_at`, 'Europe/Lisbon')) < 1782687600000000
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
-- Trigger: each unit's first qualifying exposure.
-- Segment values come from the unit's first qualifying row at the trigger time, ordered by
-- CASE WHEN variant IS NULL THEN 1 ELSE 0 END, variant, `seg_device`.
triggers AS (
  SELECT q.unit_id, CASE WHEN q.is_crossover THEN coalesce(q.row_variant, q.variant_lo) ELSE q.variant_lo END AS variant,
    q.trigger_us, q.is_crossover, q.`seg_device`
  FROM (
    SELECT u.unit_id, u.variant_lo, r.variant AS row_variant, u.trigger_us, coalesce(u.variant_lo <> u.variant_hi, FALSE) AS is_crossover, r.`seg_device`,
      row_number() OVER (PARTITION BY u.unit_id ORDER BY CASE WHEN r.variant IS NULL THEN 1 ELSE 0 END, r.variant, r.`seg_device`) AS rn
    FROM exposed_units AS u
    JOIN exposure_rows AS r ON r.unit_id = u.unit_id AND r.ts_us = u.trigger_us AND r.qualifies
  ) AS q
  WHERE q.rn = 1
),
-- Units exposed in a prior run before the analysis start: excluded as previously_exposed.
prior_units AS (
  -- Prior run first_try: visits in [2026-05-03T23:00:00Z, 2026-05-31T23:00:00Z) where device <> 'bot'.
  SELECT x.`visitor_id` AS unit_id
  FROM `web`.`basket_views` AS x
  WHERE x.`visitor_id` IS NOT NULL
    AND UNIX_MICROS(TIMESTAMP(x.`viewed_at`, 'Europe/Lisbon')) >= 1777849200000000 AND UNIX_MICROS(TIMESTAMP(x.`viewed_at`, 'Europe/Lisbon')) < 1780268400000000
    AND coalesce(x.`device` <> 'bot', FALSE)
),
-- Every triggered unit with the reasons it may be excluded.
cohort AS (
  SELECT
    t.unit_id,
    t.variant,
    t.trigger_us,
    DATE(TIMESTAMP_MICROS(t.trigger_us), 'Europe/Lisbon') AS trigger_day,
    t.`seg_device` AS `seg_device`,
    t.is_crossover,
    (t.variant IS NULL OR t.variant NOT IN ('control', 'dated')) AS is_unknown_variant,
    (pe.unit_id IS NOT NULL) AS `is_previously_exposed`
  FROM triggers AS t
  LEFT JOIN prior_units AS pe ON pe.unit_id = t.unit_id
),
-- Eligible units: one variant only, a declared variant, and every eligibility rule met at the trigger.
eligible AS (
  SELECT c.unit_id, c.variant, c.trigger_us, c.trigger_day, c.`seg_device`
  FROM cohort AS c
  WHERE NOT c.`is_crossover`
    AND NOT c.`is_unknown_variant`
    AND NOT c.`is_previously_exposed`
),
-- One pass over orders for: m_orders, m_basket_value__num, m_basket_value__den.
`pass_orders` AS (
  SELECT
    r.unit_id,
    -- m_orders: count of rows in [trigger + 0d, trigger + 14d)
    count(CASE WHEN r.dt_us >= 0 AND r.dt_us < 1209600000000 THEN 1 END) AS `m_orders`,
    -- m_basket_value__num: sum of total in [trigger + 0d, trigger + 14d)
    CAST(sum(CASE WHEN r.dt_us >= 0 AND r.dt_us < 1209600000000 AND CAST(r.`c_total` AS FLOAT64) - CAST(r.`c_total` AS FLOAT64) = 0 THEN CAST(CAST(r.`c_total` AS FLOAT64) AS BIGNUMERIC) END) AS FLOAT64) AS `m_basket_value__num`,
    count(CASE WHEN r.dt_us >= 0 AND r.dt_us < 1209600000000 AND NOT (CAST(r.`c_total` AS FLOAT64) - CAST(r.`c_total` AS FLOAT64) = 0) THEN 1 END) AS `m_basket_value__num__nonfinite`
    -- m_basket_value__den: count of rows in [trigger + 0d, trigger + 14d): the same as m_orders
  FROM (
    SELECT e.unit_id, UNIX_MICROS(TIMESTAMP(s.`placed_at`, 'Europe/Lisbon')) - e.trigger_us AS dt_us, s.`total` AS `c_total`
    FROM eligible AS e
    JOIN `web`.`orders` AS s ON s.`visitor_id` = e.unit_id
  ) AS r
  WHERE r.dt_us >= 0 AND r.dt_us < 1209600000000
  GROUP BY r.unit_id
),
-- One row per eligible unit; a unit without outcome rows counts as zero.
unit_values AS (
  SELECT
    e.unit_id,
    e.variant,
    e.trigger_day,
    e.trigger_us,
    e.`seg_device`,
    (e.trigger_us + 1209600000000 <= 1782687600000000) AS mature_14d,
    coalesce(p1.`m_orders`, 0) AS `m_orders`,
    coalesce(p1.`m_basket_value__num`, 0) AS `m_basket_value__num`,
    coalesce(p1.`m_basket_value__num__nonfinite`, 0) AS `m_basket_value__num__nonfinite`,
    coalesce(p1.`m_orders`, 0) AS `m_basket_value__den`
  FROM eligible AS e
  LEFT JOIN `pass_orders` AS p1 ON p1.unit_id = e.unit_id
),
-- Segment device: the 10 values with the most eligible units; the rest are grouped as '(other)'.
`top_device` AS (
  SELECT g.value, row_number() OVER (ORDER BY g.units DESC, g.value) AS value_rank
  FROM (
    SELECT CAST(u.`seg_device` AS STRING) AS value, count(*) AS units
    FROM unit_values AS u
    WHERE u.`seg_device` IS NOT NULL
    GROUP BY CAST(u.`seg_device` AS STRING)
  ) AS g
),
-- Each unit's segment keys: one of the top values, '(other)' for the rest, '(null)' when missing.
keyed_units AS (
  SELECT
    u.*,
    CASE WHEN u.`seg_device` IS NULL THEN '(null)' WHEN k1.value_rank <= 10 THEN k1.value ELSE '(other)' END AS `key_seg_device`
  FROM unit_values AS u
  LEFT JOIN `top_device` AS k1 ON k1.value = CAST(u.`seg_device` AS STRING)
),
-- Centres: each variant's means, subtracted before the variance and covariance aggregates so
-- their partial sums stay small (numerically stable whatever the engine's merge order).
centres AS (
  SELECT
    u.variant,
    avg(CASE WHEN u.mature_14d THEN CAST(u.`m_orders` AS FLOAT64) END) AS `c_orders`,
    avg(CASE WHEN u.mature_14d THEN CAST(u.`m_basket_value__num` AS FLOAT64) END) AS `c_basket_value__num`,
    avg(CASE WHEN u.mature_14d THEN CAST(u.`m_basket_value__den` AS FLOAT64) END) AS `c_basket_value__den`
  FROM unit_values AS u
  GROUP BY u.variant
)
-- The overall rows and one set of rows per breakdown, from one pass over the units: in each
-- grouping the keys it does not use are NULL.
SELECT
  '2983d6892f858269' AS `spec_fingerprint`,
  'as_of=2026-06-28T23:00:00Z;by=device,trigger_day,rollout_step' AS `compile_options`,
  u.variant AS `variant`,
  u.`key_seg_device` AS `seg_device`,
  u.trigger_day AS `trigger_day`,
  CASE WHEN u.trigger_us >= 1780916400000000 THEN 'wide' WHEN u.trigger_us >= 1780527600000000 THEN 'half' ELSE 'trial' END AS `rollout_step`,
  count(*) AS `units`,
  -- orders (primary, mean): mean per unit of count of rows; window [trigger + 0d, trigger + 14d), mature units only
  count(CASE WHEN u.mature_14d THEN 1 END) AS `orders__n`,
  CASE WHEN min(CASE WHEN u.mature_14d THEN CAST(u.`m_orders` AS FLOAT64) END) = max(CASE WHEN u.mature_14d THEN CAST(u.`m_orders` AS FLOAT64) END) THEN min(CASE WHEN u.mature_14d THEN CAST(u.`m_orders` AS FLOAT64) END) ELSE min(c0.`c_orders`) + avg((CASE WHEN u.mature_14d THEN CAST(u.`m_orders` AS FLOAT64) END - c0.`c_orders`)) END AS `orders__mean`,
  VAR_SAMP((CASE WHEN u.mature_14d THEN CAST(u.`m_orders` AS FLOAT64) END - c0.`c_orders`)) AS `orders__var`,
  -- basket_value (secondary, ratio): per-unit sum of total over per-unit count of rows; window [trigger + 0d, trigger + 14d), mature units only
  count(CASE WHEN u.mature_14d THEN 1 END) AS `basket_value__n`,
  CASE WHEN min(CASE WHEN u.mature_14d THEN CAST(u.`m_basket_value__num` AS FLOAT64) END) = max(CASE WHEN u.mature_14d THEN CAST(u.`m_basket_value__num` AS FLOAT64) END) THEN min(CASE WHEN u.mature_14d THEN CAST(u.`m_basket_value__num` AS FLOAT64) END) ELSE min(c0.`c_basket_value__num`) + avg((CASE WHEN u.mature_14d THEN CAST(u.`m_basket_value__num` AS FLOAT64) END - c0.`c_basket_value__num`)) END AS `basket_value__num_mean`,
  CASE WHEN min(CASE WHEN u.mature_14d THEN CAST(u.`m_basket_value__den` AS FLOAT64) END) = max(CASE WHEN u.mature_14d THEN CAST(u.`m_basket_value__den` AS FLOAT64) END) THEN min(CASE WHEN u.mature_14d THEN CAST(u.`m_basket_value__den` AS FLOAT64) END) ELSE min(c0.`c_basket_value__den`) + avg((CASE WHEN u.mature_14d THEN CAST(u.`m_basket_value__den` AS FLOAT64) END - c0.`c_basket_value__den`)) END AS `basket_value__den_mean`,
  VAR_SAMP((CASE WHEN u.mature_14d THEN CAST(u.`m_basket_value__num` AS FLOAT64) END - c0.`c_basket_value__num`)) AS `basket_value__num_var`,
  VAR_SAMP((CASE WHEN u.mature_14d THEN CAST(u.`m_basket_value__den` AS FLOAT64) END - c0.`c_basket_value__den`)) AS `basket_value__den_var`,
  COVAR_SAMP((CASE WHEN u.mature_14d THEN CAST(u.`m_basket_value__num` AS FLOAT64) END - c0.`c_basket_value__num`), (CASE WHEN u.mature_14d THEN CAST(u.`m_basket_value__den` AS FLOAT64) END - c0.`c_basket_value__den`)) AS `basket_value__cov`,
  sum(u.`m_basket_value__num__nonfinite`) AS `basket_value__nonfinite_rows`
FROM keyed_units AS u
JOIN centres AS c0 ON c0.variant = u.variant
GROUP BY GROUPING SETS ((u.variant), (u.variant, u.`key_seg_device`), (u.variant, u.trigger_day), (u.variant, CASE WHEN u.trigger_us >= 1780916400000000 THEN 'wide' WHEN u.trigger_us >= 1780527600000000 THEN 'half' ELSE 'trial' END))
ORDER BY `variant`, `seg_device`, `trigger_day`, `rollout_step`
;

-- assay 0.1.0 health query for experiment ramp (spec fingerprint 2983d6892f858269)
-- Times are compared as integer microseconds since 1970-01-01 UTC; timestamps without a zone are read as Europe/Lisbon.
-- Exposures are read in [2026-05-31T23:00:00Z, 2026-06-28T23:00:00Z); outcome windows must have ended by 2026-06-28T23:00:00Z.
WITH
-- Exposure rows of visits inside the analysis window; rows without a unit or time are ignored.
exposure_rows AS (
  SELECT
    x.`visitor_id` AS unit_id,
    CAST(x.`arm` AS STRING) AS variant,
    UNIX_MICROS(TIMESTAMP(x.`viewed_at`, 'Europe/Lisbon')) AS ts_us,
    TRUE AS qualifies,
    x.`device` AS `seg_device`
  FROM `web`.`basket_views` AS x
  WHERE x.`visitor_id` IS NOT NULL AND x.`viewed_at` IS NOT NULL
    AND UNIX_MICROS(TIMESTAMP(x.`viewed_at`, 'Europe/Lisbon')) >= 1780268400000000 AND UNIX_MICROS(TIMESTAMP(x.`viewed_at`, 'Europe/Lisbon')) < 1782687600000000
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
-- Trigger: each unit's first qualifying exposure.
-- Segment values come from the unit's first qualifying row at the trigger time, ordered by
-- CASE WHEN variant IS NULL THEN 1 ELSE 0 END, variant, `seg_device`.
triggers AS (
  SELECT q.unit_id, CASE WHEN q.is_crossover THEN coalesce(q.row_variant, q.variant_lo) ELSE q.variant_lo END AS variant,
    q.trigger_us, q.is_crossover, q.`seg_device`
  FROM (
    SELECT u.unit_id, u.variant_lo, r.variant AS row_variant, u.trigger_us, coalesce(u.variant_lo <> u.variant_hi, FALSE) AS is_crossover, r.`seg_device`,
      row_number() OVER (PARTITION BY u.unit_id ORDER BY CASE WHEN r.variant IS NULL THEN 1 ELSE 0 END, r.variant, r.`seg_device`) AS rn
    FROM exposed_units AS u
    JOIN exposure_rows AS r ON r.unit_id = u.unit_id AND r.ts_us = u.trigger_us AND r.qualifies
  ) AS q
  WHERE q.rn = 1
),
-- Units exposed in a prior run before the analysis start: excluded as previously_exposed.
prior_units AS (
  -- Prior run first_try: visits in [2026-05-03T23:00:00Z, 2026-05-31T23:00:00Z) where device <> 'bot'.
  SELECT x.`visitor_id` AS unit_id
  FROM `web`.`basket_views` AS x
  WHERE x.`visitor_id` IS NOT NULL
    AND UNIX_MICROS(TIMESTAMP(x.`viewed_at`, 'Europe/Lisbon')) >= 1777849200000000 AND UNIX_MICROS(TIMESTAMP(x.`viewed_at`, 'Europe/Lisbon')) < 1780268400000000
    AND coalesce(x.`device` <> 'bot', FALSE)
),
-- Every triggered unit with the reasons it may be excluded.
cohort AS (
  SELECT
    t.unit_id,
    t.variant,
    t.trigger_us,
    DATE(TIMESTAMP_MICROS(t.trigger_us), 'Europe/Lisbon') AS trigger_day,
    t.`seg_device` AS `seg_device`,
    t.is_crossover,
    (t.variant IS NULL OR t.variant NOT IN ('control', 'dated')) AS is_unknown_variant,
    (pe.unit_id IS NOT NULL) AS `is_previously_exposed`
  FROM triggers AS t
  LEFT JOIN prior_units AS pe ON pe.unit_id = t.unit_id
),
-- Exposure rows outside the analysis window, or without a unit or time.
ignored_rows AS (
  SELECT
    count(CASE WHEN x.`visitor_id` IS NULL THEN 1 END) AS null_unit,
    count(CASE WHEN x.`viewed_at` IS NULL THEN 1 END) AS null_time,
    count(CASE WHEN UNIX_MICROS(TIMESTAMP(x.`viewed_at`, 'Europe/Lisbon')) < 1780268400000000 THEN 1 END) AS before_start,
    count(CASE WHEN UNIX_MICROS(TIMESTAMP(x.`viewed_at`, 'Europe/Lisbon')) >= 1782687600000000 THEN 1 END) AS after_end
  FROM `web`.`basket_views` AS x
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
  FROM `web`.`orders` AS s
),
-- Eligible units: one variant only, a declared variant, and every eligibility rule met at the trigger.
eligible AS (
  SELECT c.unit_id, c.variant, c.trigger_us, c.trigger_day, c.`seg_device`
  FROM cohort AS c
  WHERE NOT c.`is_crossover`
    AND NOT c.`is_unknown_variant`
    AND NOT c.`is_previously_exposed`
),
-- Each unit's latest row of orders in the analysis period before the as-of time.
last_1 AS (
  SELECT s.`visitor_id` AS unit_id, max(UNIX_MICROS(TIMESTAMP(s.`placed_at`, 'Europe/Lisbon'))) AS last_us
  FROM `web`.`orders` AS s
  WHERE s.`visitor_id` IS NOT NULL AND UNIX_MICROS(TIMESTAMP(s.`placed_at`, 'Europe/Lisbon')) >= 1780268400000000 AND UNIX_MICROS(TIMESTAMP(s.`placed_at`, 'Europe/Lisbon')) < 1782687600000000
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
  SELECT 'exposures' AS kind, NULL AS reason, NULL AS source, variant AS variant, DATE(TIMESTAMP_MICROS(ts_us), 'Europe/Lisbon') AS day, count(*) AS row_count, count(DISTINCT unit_id) AS unit_count
  FROM exposure_rows
  GROUP BY variant, DATE(TIMESTAMP_MICROS(ts_us), 'Europe/Lisbon')
  UNION ALL
  SELECT 'triggers' AS kind, NULL AS reason, NULL AS source, variant AS variant, trigger_day AS day, count(CASE WHEN NOT `is_previously_exposed` THEN 1 END) AS row_count, count(*) AS unit_count
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
  SELECT 'excluded' AS kind, 'previously_exposed' AS reason, NULL AS source, variant AS variant, NULL AS day, count(*) AS row_count, count(*) AS unit_count
  FROM cohort
  WHERE `is_previously_exposed`
  GROUP BY variant
  UNION ALL
  SELECT 'excluded' AS kind, 'any' AS reason, NULL AS source, variant AS variant, NULL AS day, count(*) AS row_count, count(*) AS unit_count
  FROM cohort
  WHERE `is_crossover` OR `is_unknown_variant` OR `is_previously_exposed`
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
