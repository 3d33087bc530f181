-- assay 0.1.0 per-variant statistics query for experiment stand-in (spec fingerprint a72b7c045ae03f81)
-- Times are compared as integer microseconds since 1970-01-01 UTC; timestamps without a zone are read as UTC.
-- Exposures are read in [2026-03-02T00:00:00Z, 2026-04-27T00:00:00Z); outcome windows must have ended by 2026-04-27T00:00:00Z.
-- Planning query: no variants. The trigger is a stand-in, each unit's first row of visits (a row qualifies when: page = 'checkout');
-- every unit is pooled into one arm, all.
WITH
-- Exposure rows of visits inside the analysis window; rows without a unit or time are ignored.
exposure_rows AS (
  SELECT
    x.`visitor_id` AS unit_id,
    CAST('all' AS CHAR CHARACTER SET utf8mb4) COLLATE utf8mb4_bin AS variant,
    TIMESTAMPDIFF(MICROSECOND, TIMESTAMP '1970-01-01 00:00:00', x.`visited_at`) AS ts_us,
    coalesce(x.`page` = _utf8mb4'checkout' COLLATE utf8mb4_bin, FALSE) AS qualifies
  FROM `analytics`.`visits` AS x
  WHERE x.`visitor_id` IS NOT NULL AND x.`visited_at` IS NOT NULL
    AND TIMESTAMPDIFF(MICROSECOND, TIMESTAMP '1970-01-01 00:00:00', x.`visited_at`) >= 1772409600000000 AND TIMESTAMPDIFF(MICROSECOND, TIMESTAMP '1970-01-01 00:00:00', x.`visited_at`) < 1777248000000000
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
-- Trigger: each unit's first qualifying exposure (a row qualifies when: page = 'checkout').
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
-- Rule returning: eligible when the unit has row in visits in [trigger - 28d, trigger + 0d).
rule_1 AS (
  SELECT DISTINCT t.unit_id
  FROM triggers AS t
  JOIN `analytics`.`visits` AS s ON s.`visitor_id` = t.unit_id
  WHERE TIMESTAMPDIFF(MICROSECOND, TIMESTAMP '1970-01-01 00:00:00', s.`visited_at`) >= t.trigger_us - 2419200000000
    AND TIMESTAMPDIFF(MICROSECOND, TIMESTAMP '1970-01-01 00:00:00', s.`visited_at`) < t.trigger_us + 0
    AND coalesce(TRUE, FALSE)
),
-- Every triggered unit with the reasons it may be excluded.
cohort AS (
  SELECT
    t.unit_id,
    t.variant,
    t.trigger_us,
    DATE(TIMESTAMPADD(MICROSECOND, t.trigger_us, TIMESTAMP '1970-01-01 00:00:00')) AS trigger_day,
    t.is_crossover,
    (t.variant IS NULL OR t.variant NOT IN ('all')) AS is_unknown_variant,
    (r1.unit_id IS NULL) AS `fails_returning`
  FROM triggers AS t
  LEFT JOIN rule_1 AS r1 ON r1.unit_id = t.unit_id
),
-- Eligible units: one variant only, a declared variant, and every eligibility rule met at the trigger.
eligible AS (
  SELECT c.unit_id, c.variant, c.trigger_us, c.trigger_day
  FROM cohort AS c
  WHERE NOT c.`is_crossover`
    AND NOT c.`is_unknown_variant`
    AND NOT c.`fails_returning`
),
-- One pass over checkouts for: m_checkouts_7d, m_checkouts_7d__x, m_order_value__num, m_order_value__den, m_converted.
`pass_checkouts` AS (
  SELECT
    r.unit_id,
    -- m_checkouts_7d: count of rows in [trigger + 0d, trigger + 7d)
    count(CASE WHEN r.dt_us >= 0 AND r.dt_us < 604800000000 THEN 1 END) AS `m_checkouts_7d`,
    -- m_checkouts_7d__x: count of rows in [trigger - 28d, trigger + 0d)
    count(CASE WHEN r.dt_us >= -2419200000000 AND r.dt_us < 0 THEN 1 END) AS `m_checkouts_7d__x`,
    -- m_order_value__num: sum of total in [trigger + 0d, trigger + 7d)
    CAST(sum(CASE WHEN r.dt_us >= 0 AND r.dt_us < 604800000000 AND CAST(r.`c_total` AS DOUBLE) - CAST(r.`c_total` AS DOUBLE) = 0 THEN CAST(CAST(r.`c_total` AS DOUBLE) AS DECIMAL(38, 10)) END) AS DOUBLE) AS `m_order_value__num`,
    count(CASE WHEN r.dt_us >= 0 AND r.dt_us < 604800000000 AND NOT (CAST(r.`c_total` AS DOUBLE) - CAST(r.`c_total` AS DOUBLE) = 0) THEN 1 END) AS `m_order_value__num__nonfinite`
    -- m_order_value__den: count of rows in [trigger + 0d, trigger + 7d): the same as m_checkouts_7d
    -- m_converted: count of rows in [trigger + 0d, trigger + 7d): the same as m_checkouts_7d
  FROM (
    SELECT e.unit_id, TIMESTAMPDIFF(MICROSECOND, TIMESTAMP '1970-01-01 00:00:00', s.`completed_at`) - e.trigger_us AS dt_us, s.`total` AS `c_total`
    FROM eligible AS e
    JOIN `analytics`.`checkouts` AS s ON s.`visitor_id` = e.unit_id
  ) AS r
  WHERE r.dt_us >= -2419200000000 AND r.dt_us < 604800000000
  GROUP BY r.unit_id
),
-- One row per eligible unit; a unit without outcome rows counts as zero.
unit_values AS (
  SELECT
    e.unit_id,
    e.variant,
    e.trigger_day,
    (e.trigger_us + 604800000000 <= 1777248000000000) AS mature_7d,
    coalesce(p1.`m_checkouts_7d`, 0) AS `m_checkouts_7d`,
    coalesce(p1.`m_checkouts_7d__x`, 0) AS `m_checkouts_7d__x`,
    coalesce(p1.`m_order_value__num`, 0) AS `m_order_value__num`,
    coalesce(p1.`m_order_value__num__nonfinite`, 0) AS `m_order_value__num__nonfinite`,
    coalesce(p1.`m_checkouts_7d`, 0) AS `m_order_value__den`,
    coalesce(p1.`m_checkouts_7d`, 0) AS `m_converted`
  FROM eligible AS e
  LEFT JOIN `pass_checkouts` AS p1 ON p1.unit_id = e.unit_id
),
-- Centres: pooled means (calibration groups mix the variants), subtracted before the variance
-- and covariance aggregates so their partial sums stay small.
centres AS (
  SELECT
    avg(CASE WHEN u.mature_7d THEN CAST(u.`m_checkouts_7d` AS DOUBLE) END) AS `c_checkouts_7d`,
    avg(CASE WHEN u.mature_7d THEN CAST(u.`m_checkouts_7d__x` AS DOUBLE) END) AS `c_checkouts_7d__x`,
    avg(CASE WHEN u.mature_7d THEN CAST(LEAST(u.`m_order_value__num`, 500) AS DOUBLE) END) AS `c_order_value__num`,
    avg(CASE WHEN u.mature_7d THEN CAST(u.`m_order_value__den` AS DOUBLE) END) AS `c_order_value__den`
  FROM unit_values AS u
)
SELECT
  'a72b7c045ae03f81' AS `spec_fingerprint`,
  'as_of=2026-04-27T00:00:00Z;start=2026-03-02T00:00:00Z;end=2026-04-27T00:00:00Z;splits=20;salt=3;stand_in=true' AS `compile_options`,
  -- Calibration: each eligible unit is re-assigned at random in each of 20 splits (salt 3), with the planned weights.
  z.split AS `split`,
  CASE WHEN CAST(CONV(SUBSTRING(MD5(CONCAT(CAST(u.unit_id AS CHAR), ':', CAST(z.split AS CHAR), ':3')), 1, 8), 16, 10) AS UNSIGNED) / 4294967296.0 < 0.5 THEN 'control' WHEN CAST(CONV(SUBSTRING(MD5(CONCAT(CAST(u.unit_id AS CHAR), ':', CAST(z.split AS CHAR), ':3')), 1, 8), 16, 10) AS UNSIGNED) / 4294967296.0 < 0.75 THEN 'big_button' ELSE 'big_text' END AS `variant`,
  count(*) AS `units`,
  -- checkouts_7d (primary, mean): mean per unit of count of rows; window [trigger + 0d, trigger + 7d), mature units only
  count(CASE WHEN u.mature_7d THEN 1 END) AS `checkouts_7d__n`,
  CASE WHEN min(CASE WHEN u.mature_7d THEN CAST(u.`m_checkouts_7d` AS DOUBLE) END) = max(CASE WHEN u.mature_7d THEN CAST(u.`m_checkouts_7d` AS DOUBLE) END) THEN min(CASE WHEN u.mature_7d THEN CAST(u.`m_checkouts_7d` AS DOUBLE) END) ELSE min(c0.`c_checkouts_7d`) + avg((CASE WHEN u.mature_7d THEN CAST(u.`m_checkouts_7d` AS DOUBLE) END - c0.`c_checkouts_7d`)) END AS `checkouts_7d__mean`,
  VAR_SAMP((CASE WHEN u.mature_7d THEN CAST(u.`m_checkouts_7d` AS DOUBLE) END - c0.`c_checkouts_7d`)) AS `checkouts_7d__var`,
  -- checkouts_7d covariate: count of rows (definition of checkouts_7d) in [trigger - 28d, trigger + 0d), before the trigger
  CASE WHEN min(CASE WHEN u.mature_7d THEN CAST(u.`m_checkouts_7d__x` AS DOUBLE) END) = max(CASE WHEN u.mature_7d THEN CAST(u.`m_checkouts_7d__x` AS DOUBLE) END) THEN min(CASE WHEN u.mature_7d THEN CAST(u.`m_checkouts_7d__x` AS DOUBLE) END) ELSE min(c0.`c_checkouts_7d__x`) + avg((CASE WHEN u.mature_7d THEN CAST(u.`m_checkouts_7d__x` AS DOUBLE) END - c0.`c_checkouts_7d__x`)) END AS `checkouts_7d__x_mean`,
  VAR_SAMP((CASE WHEN u.mature_7d THEN CAST(u.`m_checkouts_7d__x` AS DOUBLE) END - c0.`c_checkouts_7d__x`)) AS `checkouts_7d__x_var`,
  (VAR_SAMP((CASE WHEN u.mature_7d THEN CAST(u.`m_checkouts_7d` AS DOUBLE) END - c0.`c_checkouts_7d`) + (CASE WHEN u.mature_7d THEN CAST(u.`m_checkouts_7d__x` AS DOUBLE) END - c0.`c_checkouts_7d__x`)) - VAR_SAMP(CASE WHEN (CASE WHEN u.mature_7d THEN CAST(u.`m_checkouts_7d__x` AS DOUBLE) END - c0.`c_checkouts_7d__x`) IS NOT NULL THEN (CASE WHEN u.mature_7d THEN CAST(u.`m_checkouts_7d` AS DOUBLE) END - c0.`c_checkouts_7d`) END) - VAR_SAMP(CASE WHEN (CASE WHEN u.mature_7d THEN CAST(u.`m_checkouts_7d` AS DOUBLE) END - c0.`c_checkouts_7d`) IS NOT NULL THEN (CASE WHEN u.mature_7d THEN CAST(u.`m_checkouts_7d__x` AS DOUBLE) END - c0.`c_checkouts_7d__x`) END)) / 2 AS `checkouts_7d__yx_cov`,
  -- order_value (secondary, ratio): per-unit sum of total, capped at 500 over per-unit count of rows; window [trigger + 0d, trigger + 7d), mature units only
  count(CASE WHEN u.mature_7d THEN 1 END) AS `order_value__n`,
  CASE WHEN min(CASE WHEN u.mature_7d THEN CAST(LEAST(u.`m_order_value__num`, 500) AS DOUBLE) END) = max(CASE WHEN u.mature_7d THEN CAST(LEAST(u.`m_order_value__num`, 500) AS DOUBLE) END) THEN min(CASE WHEN u.mature_7d THEN CAST(LEAST(u.`m_order_value__num`, 500) AS DOUBLE) END) ELSE min(c0.`c_order_value__num`) + avg((CASE WHEN u.mature_7d THEN CAST(LEAST(u.`m_order_value__num`, 500) AS DOUBLE) END - c0.`c_order_value__num`)) END AS `order_value__num_mean`,
  CASE WHEN min(CASE WHEN u.mature_7d THEN CAST(u.`m_order_value__den` AS DOUBLE) END) = max(CASE WHEN u.mature_7d THEN CAST(u.`m_order_value__den` AS DOUBLE) END) THEN min(CASE WHEN u.mature_7d THEN CAST(u.`m_order_value__den` AS DOUBLE) END) ELSE min(c0.`c_order_value__den`) + avg((CASE WHEN u.mature_7d THEN CAST(u.`m_order_value__den` AS DOUBLE) END - c0.`c_order_value__den`)) END AS `order_value__den_mean`,
  VAR_SAMP((CASE WHEN u.mature_7d THEN CAST(LEAST(u.`m_order_value__num`, 500) AS DOUBLE) END - c0.`c_order_value__num`)) AS `order_value__num_var`,
  VAR_SAMP((CASE WHEN u.mature_7d THEN CAST(u.`m_order_value__den` AS DOUBLE) END - c0.`c_order_value__den`)) AS `order_value__den_var`,
  (VAR_SAMP((CASE WHEN u.mature_7d THEN CAST(LEAST(u.`m_order_value__num`, 500) AS DOUBLE) END - c0.`c_order_value__num`) + (CASE WHEN u.mature_7d THEN CAST(u.`m_order_value__den` AS DOUBLE) END - c0.`c_order_value__den`)) - VAR_SAMP(CASE WHEN (CASE WHEN u.mature_7d THEN CAST(u.`m_order_value__den` AS DOUBLE) END - c0.`c_order_value__den`) IS NOT NULL THEN (CASE WHEN u.mature_7d THEN CAST(LEAST(u.`m_order_value__num`, 500) AS DOUBLE) END - c0.`c_order_value__num`) END) - VAR_SAMP(CASE WHEN (CASE WHEN u.mature_7d THEN CAST(LEAST(u.`m_order_value__num`, 500) AS DOUBLE) END - c0.`c_order_value__num`) IS NOT NULL THEN (CASE WHEN u.mature_7d THEN CAST(u.`m_order_value__den` AS DOUBLE) END - c0.`c_order_value__den`) END)) / 2 AS `order_value__cov`,
  sum(u.`m_order_value__num__nonfinite`) AS `order_value__nonfinite_rows`,
  -- converted (guard, proportion): share of units whose count of rows is above 0; window [trigger + 0d, trigger + 7d), mature units only
  count(CASE WHEN u.mature_7d THEN 1 END) AS `converted__n`,
  avg(CASE WHEN u.mature_7d THEN CASE WHEN u.`m_converted` > 0 THEN CAST(1 AS DOUBLE) ELSE CAST(0 AS DOUBLE) END END) AS `converted__mean`,
  VAR_SAMP(CASE WHEN u.mature_7d THEN CASE WHEN u.`m_converted` > 0 THEN CAST(1 AS DOUBLE) ELSE CAST(0 AS DOUBLE) END END) AS `converted__var`
FROM unit_values AS u
CROSS JOIN centres AS c0
CROSS JOIN (SELECT d0.d + 10 * d1.d + 100 * d2.d + 1000 * d3.d AS split FROM (SELECT 0 AS d UNION ALL SELECT 1 UNION ALL SELECT 2 UNION ALL SELECT 3 UNION ALL SELECT 4 UNION ALL SELECT 5 UNION ALL SELECT 6 UNION ALL SELECT 7 UNION ALL SELECT 8 UNION ALL SELECT 9) AS d0 CROSS JOIN (SELECT 0 AS d UNION ALL SELECT 1 UNION ALL SELECT 2 UNION ALL SELECT 3 UNION ALL SELECT 4 UNION ALL SELECT 5 UNION ALL SELECT 6 UNION ALL SELECT 7 UNION ALL SELECT 8 UNION ALL SELECT 9) AS d1 CROSS JOIN (SELECT 0 AS d UNION ALL SELECT 1 UNION ALL SELECT 2 UNION ALL SELECT 3 UNION ALL SELECT 4 UNION ALL SELECT 5 UNION ALL SELECT 6 UNION ALL SELECT 7 UNION ALL SELECT 8 UNION ALL SELECT 9) AS d2 CROSS JOIN (SELECT 0 AS d UNION ALL SELECT 1 UNION ALL SELECT 2 UNION ALL SELECT 3 UNION ALL SELECT 4 UNION ALL SELECT 5 UNION ALL SELECT 6 UNION ALL SELECT 7 UNION ALL SELECT 8 UNION ALL SELECT 9) AS d3 WHERE d0.d + 10 * d1.d + 100 * d2.d + 1000 * d3.d < 20) AS z
GROUP BY z.split, CASE WHEN CAST(CONV(SUBSTRING(MD5(CONCAT(CAST(u.unit_id AS CHAR), ':', CAST(z.split AS CHAR), ':3')), 1, 8), 16, 10) AS UNSIGNED) / 4294967296.0 < 0.5 THEN 'control' WHEN CAST(CONV(SUBSTRING(MD5(CONCAT(CAST(u.unit_id AS CHAR), ':', CAST(z.split AS CHAR), ':3')), 1, 8), 16, 10) AS UNSIGNED) / 4294967296.0 < 0.75 THEN 'big_button' ELSE 'big_text' END
ORDER BY `split`, `variant`
;

-- assay 0.1.0 health query for experiment stand-in (spec fingerprint a72b7c045ae03f81)
-- Times are compared as integer microseconds since 1970-01-01 UTC; timestamps without a zone are read as UTC.
-- Exposures are read in [2026-03-02T00:00:00Z, 2026-04-27T00:00:00Z); outcome windows must have ended by 2026-04-27T00:00:00Z.
-- Planning query: no variants. The trigger is a stand-in, each unit's first row of visits (a row qualifies when: page = 'checkout');
-- every unit is pooled into one arm, all.
WITH
-- Exposure rows of visits inside the analysis window; rows without a unit or time are ignored.
exposure_rows AS (
  SELECT
    x.`visitor_id` AS unit_id,
    CAST('all' AS CHAR CHARACTER SET utf8mb4) COLLATE utf8mb4_bin AS variant,
    TIMESTAMPDIFF(MICROSECOND, TIMESTAMP '1970-01-01 00:00:00', x.`visited_at`) AS ts_us,
    coalesce(x.`page` = _utf8mb4'checkout' COLLATE utf8mb4_bin, FALSE) AS qualifies
  FROM `analytics`.`visits` AS x
  WHERE x.`visitor_id` IS NOT NULL AND x.`visited_at` IS NOT NULL
    AND TIMESTAMPDIFF(MICROSECOND, TIMESTAMP '1970-01-01 00:00:00', x.`visited_at`) >= 1772409600000000 AND TIMESTAMPDIFF(MICROSECOND, TIMESTAMP '1970-01-01 00:00:00', x.`visited_at`) < 1777248000000000
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
-- Trigger: each unit's first qualifying exposure (a row qualifies when: page = 'checkout').
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
-- Rule returning: eligible when the unit has row in visits in [trigger - 28d, trigger + 0d).
rule_1 AS (
  SELECT DISTINCT t.unit_id
  FROM triggers AS t
  JOIN `analytics`.`visits` AS s ON s.`visitor_id` = t.unit_id
  WHERE TIMESTAMPDIFF(MICROSECOND, TIMESTAMP '1970-01-01 00:00:00', s.`visited_at`) >= t.trigger_us - 2419200000000
    AND TIMESTAMPDIFF(MICROSECOND, TIMESTAMP '1970-01-01 00:00:00', s.`visited_at`) < t.trigger_us + 0
    AND coalesce(TRUE, FALSE)
),
-- Every triggered unit with the reasons it may be excluded.
cohort AS (
  SELECT
    t.unit_id,
    t.variant,
    t.trigger_us,
    DATE(TIMESTAMPADD(MICROSECOND, t.trigger_us, TIMESTAMP '1970-01-01 00:00:00')) AS trigger_day,
    t.is_crossover,
    (t.variant IS NULL OR t.variant NOT IN ('all')) AS is_unknown_variant,
    (r1.unit_id IS NULL) AS `fails_returning`
  FROM triggers AS t
  LEFT JOIN rule_1 AS r1 ON r1.unit_id = t.unit_id
),
-- Exposure rows outside the analysis window, or without a unit or time.
ignored_rows AS (
  SELECT
    count(CASE WHEN x.`visitor_id` IS NULL THEN 1 END) AS null_unit,
    count(CASE WHEN x.`visited_at` IS NULL THEN 1 END) AS null_time,
    count(CASE WHEN TIMESTAMPDIFF(MICROSECOND, TIMESTAMP '1970-01-01 00:00:00', x.`visited_at`) < 1772409600000000 THEN 1 END) AS before_start,
    count(CASE WHEN TIMESTAMPDIFF(MICROSECOND, TIMESTAMP '1970-01-01 00:00:00', x.`visited_at`) >= 1777248000000000 THEN 1 END) AS after_end
  FROM `analytics`.`visits` AS x
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
-- Rows of checkouts that no metric or rule can use: no unit or no time.
nulls_1 AS (
  SELECT count(*) - count(s.`visitor_id`) AS null_unit, count(*) - count(s.`completed_at`) AS null_time
  FROM `analytics`.`checkouts` AS s
)
SELECT h.kind, h.reason, h.source, h.variant, h.day, h.row_count, h.unit_count FROM (
  SELECT 'exposures' AS kind, NULL AS reason, NULL AS source, variant AS variant, DATE(TIMESTAMPADD(MICROSECOND, ts_us, TIMESTAMP '1970-01-01 00:00:00')) AS day, count(*) AS row_count, count(DISTINCT unit_id) AS unit_count
  FROM exposure_rows
  GROUP BY variant, DATE(TIMESTAMPADD(MICROSECOND, ts_us, TIMESTAMP '1970-01-01 00:00:00'))
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
  SELECT 'excluded' AS kind, 'rule:returning' AS reason, NULL AS source, variant AS variant, NULL AS day, count(*) AS row_count, count(*) AS unit_count
  FROM cohort
  WHERE `fails_returning`
  GROUP BY variant
  UNION ALL
  SELECT 'excluded' AS kind, 'any' AS reason, NULL AS source, variant AS variant, NULL AS day, count(*) AS row_count, count(*) AS unit_count
  FROM cohort
  WHERE `is_crossover` OR `is_unknown_variant` OR `fails_returning`
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
  SELECT 'ignored_outcome_rows' AS kind, 'null_unit' AS reason, 'checkouts' AS source, NULL AS variant, NULL AS day, null_unit AS row_count, NULL AS unit_count
  FROM nulls_1
  UNION ALL
  SELECT 'ignored_outcome_rows' AS kind, 'null_time' AS reason, 'checkouts' AS source, NULL AS variant, NULL AS day, null_time AS row_count, NULL AS unit_count
  FROM nulls_1
  UNION ALL
  SELECT 'unknown_variant' AS kind, NULL AS reason, NULL AS source, variant AS variant, NULL AS day, units AS row_count, units AS unit_count
  FROM unknown_values
) AS h
ORDER BY h.kind, h.reason, h.source, h.variant, h.day
;
