-- assay 0.1.0 per-variant statistics query for experiment timezone (spec fingerprint 30545d85e4254998)
-- Times are compared as integer microseconds since 1970-01-01 UTC; timestamps without a zone are read as Europe/Amsterdam.
-- Exposures are read in [2026-02-28T23:00:00Z, 2026-03-31T22:00:00Z); outcome windows must have ended by 2026-03-31T22:00:00Z.
WITH
-- Exposure rows of sends inside the analysis window; rows without a unit or time are ignored.
exposure_rows AS (
  SELECT
    x.`user id` AS unit_id,
    CAST(x.`arm "v"` AS CHAR CHARACTER SET utf8mb4) COLLATE utf8mb4_bin AS variant,
    TIMESTAMPDIFF(MICROSECOND, TIMESTAMP '1970-01-01 00:00:00', CONVERT_TZ(x.`sent at`, 'Europe/Amsterdam', '+00:00')) AS ts_us,
    coalesce(x.`länd` = _utf8mb4'NL' COLLATE utf8mb4_bin OR x.`länd` = _utf8mb4'BE' COLLATE utf8mb4_bin, FALSE) AS qualifies
  FROM `mail`.`digest sends` AS x
  WHERE x.`user id` IS NOT NULL AND x.`sent at` IS NOT NULL
    AND TIMESTAMPDIFF(MICROSECOND, TIMESTAMP '1970-01-01 00:00:00', CONVERT_TZ(x.`sent at`, 'Europe/Amsterdam', '+00:00')) >= 1772319600000000 AND TIMESTAMPDIFF(MICROSECOND, TIMESTAMP '1970-01-01 00:00:00', CONVERT_TZ(x.`sent at`, 'Europe/Amsterdam', '+00:00')) < 1774994400000000
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
-- Trigger: each unit's first qualifying exposure (a row qualifies when: "länd" = 'NL' OR "länd" = 'BE').
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
    DATE(CONVERT_TZ(TIMESTAMPADD(MICROSECOND, t.trigger_us, TIMESTAMP '1970-01-01 00:00:00'), '+00:00', 'Europe/Amsterdam')) AS trigger_day,
    t.is_crossover,
    (t.variant IS NULL OR t.variant NOT IN ('nine o''clock', 'seven')) AS is_unknown_variant
  FROM triggers AS t
),
-- Eligible units: one variant only, a declared variant, and every eligibility rule met at the trigger.
eligible AS (
  SELECT c.unit_id, c.variant, c.trigger_us, c.trigger_day
  FROM cohort AS c
  WHERE NOT c.`is_crossover`
    AND NOT c.`is_unknown_variant`
),
-- One pass over opens for: m_opens_3d.
`pass_opens` AS (
  SELECT
    r.unit_id,
    -- m_opens_3d: count of rows where client <> 'proxy''s' in [trigger + 0d, trigger + 3d)
    count(CASE WHEN r.dt_us >= 0 AND r.dt_us < 259200000000 AND (r.`c_client` <> _utf8mb4'proxy''s' COLLATE utf8mb4_bin) THEN 1 END) AS `m_opens_3d`
  FROM (
    SELECT e.unit_id, TIMESTAMPDIFF(MICROSECOND, TIMESTAMP '1970-01-01 00:00:00', CONVERT_TZ(s.`opened at`, 'Europe/Amsterdam', '+00:00')) - e.trigger_us AS dt_us, s.`client` AS `c_client`
    FROM eligible AS e
    JOIN `mail`.`opens` AS s ON s.`user id` = e.unit_id
  ) AS r
  WHERE r.dt_us >= 0 AND r.dt_us < 259200000000
  GROUP BY r.unit_id
),
-- One row per eligible unit; a unit without outcome rows counts as zero.
unit_values AS (
  SELECT
    e.unit_id,
    e.variant,
    e.trigger_day,
    (e.trigger_us + 259200000000 <= 1774994400000000) AS mature_3d,
    coalesce(p1.`m_opens_3d`, 0) AS `m_opens_3d`
  FROM eligible AS e
  LEFT JOIN `pass_opens` AS p1 ON p1.unit_id = e.unit_id
),
-- Centres: each variant's means, subtracted before the variance and covariance aggregates so
-- their partial sums stay small (numerically stable whatever the engine's merge order).
centres AS (
  SELECT
    u.variant,
    avg(CASE WHEN u.mature_3d THEN CAST(u.`m_opens_3d` AS DOUBLE) END) AS `c_opens_3d`
  FROM unit_values AS u
  GROUP BY u.variant
)
SELECT
  '30545d85e4254998' AS `spec_fingerprint`,
  'as_of=2026-03-31T22:00:00Z' AS `compile_options`,
  u.variant AS `variant`,
  count(*) AS `units`,
  -- opens_3d (primary, mean): mean per unit of count of rows where client <> 'proxy''s'; window [trigger + 0d, trigger + 3d), mature units only
  count(CASE WHEN u.mature_3d THEN 1 END) AS `opens_3d__n`,
  CASE WHEN min(CASE WHEN u.mature_3d THEN CAST(u.`m_opens_3d` AS DOUBLE) END) = max(CASE WHEN u.mature_3d THEN CAST(u.`m_opens_3d` AS DOUBLE) END) THEN min(CASE WHEN u.mature_3d THEN CAST(u.`m_opens_3d` AS DOUBLE) END) ELSE min(c0.`c_opens_3d`) + avg((CASE WHEN u.mature_3d THEN CAST(u.`m_opens_3d` AS DOUBLE) END - c0.`c_opens_3d`)) END AS `opens_3d__mean`,
  VAR_SAMP((CASE WHEN u.mature_3d THEN CAST(u.`m_opens_3d` AS DOUBLE) END - c0.`c_opens_3d`)) AS `opens_3d__var`
FROM unit_values AS u
JOIN centres AS c0 ON c0.variant = u.variant
GROUP BY u.variant
ORDER BY `variant`
;

-- assay 0.1.0 health query for experiment timezone (spec fingerprint 30545d85e4254998)
-- Times are compared as integer microseconds since 1970-01-01 UTC; timestamps without a zone are read as Europe/Amsterdam.
-- Exposures are read in [2026-02-28T23:00:00Z, 2026-03-31T22:00:00Z); outcome windows must have ended by 2026-03-31T22:00:00Z.
WITH
-- Exposure rows of sends inside the analysis window; rows without a unit or time are ignored.
exposure_rows AS (
  SELECT
    x.`user id` AS unit_id,
    CAST(x.`arm "v"` AS CHAR CHARACTER SET utf8mb4) COLLATE utf8mb4_bin AS variant,
    TIMESTAMPDIFF(MICROSECOND, TIMESTAMP '1970-01-01 00:00:00', CONVERT_TZ(x.`sent at`, 'Europe/Amsterdam', '+00:00')) AS ts_us,
    coalesce(x.`länd` = _utf8mb4'NL' COLLATE utf8mb4_bin OR x.`länd` = _utf8mb4'BE' COLLATE utf8mb4_bin, FALSE) AS qualifies
  FROM `mail`.`digest sends` AS x
  WHERE x.`user id` IS NOT NULL AND x.`sent at` IS NOT NULL
    AND TIMESTAMPDIFF(MICROSECOND, TIMESTAMP '1970-01-01 00:00:00', CONVERT_TZ(x.`sent at`, 'Europe/Amsterdam', '+00:00')) >= 1772319600000000 AND TIMESTAMPDIFF(MICROSECOND, TIMESTAMP '1970-01-01 00:00:00', CONVERT_TZ(x.`sent at`, 'Europe/Amsterdam', '+00:00')) < 1774994400000000
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
-- Trigger: each unit's first qualifying exposure (a row qualifies when: "länd" = 'NL' OR "länd" = 'BE').
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
    DATE(CONVERT_TZ(TIMESTAMPADD(MICROSECOND, t.trigger_us, TIMESTAMP '1970-01-01 00:00:00'), '+00:00', 'Europe/Amsterdam')) AS trigger_day,
    t.is_crossover,
    (t.variant IS NULL OR t.variant NOT IN ('nine o''clock', 'seven')) AS is_unknown_variant
  FROM triggers AS t
),
-- Exposure rows outside the analysis window, or without a unit or time.
ignored_rows AS (
  SELECT
    count(CASE WHEN x.`user id` IS NULL THEN 1 END) AS null_unit,
    count(CASE WHEN x.`sent at` IS NULL THEN 1 END) AS null_time,
    count(CASE WHEN TIMESTAMPDIFF(MICROSECOND, TIMESTAMP '1970-01-01 00:00:00', CONVERT_TZ(x.`sent at`, 'Europe/Amsterdam', '+00:00')) < 1772319600000000 THEN 1 END) AS before_start,
    count(CASE WHEN TIMESTAMPDIFF(MICROSECOND, TIMESTAMP '1970-01-01 00:00:00', CONVERT_TZ(x.`sent at`, 'Europe/Amsterdam', '+00:00')) >= 1774994400000000 THEN 1 END) AS after_end
  FROM `mail`.`digest sends` AS x
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
-- Rows of opens that no metric or rule can use: no unit or no time.
nulls_1 AS (
  SELECT count(*) - count(s.`user id`) AS null_unit, count(*) - count(s.`opened at`) AS null_time
  FROM `mail`.`opens` AS s
),
-- Eligible units: one variant only, a declared variant, and every eligibility rule met at the trigger.
eligible AS (
  SELECT c.unit_id, c.variant, c.trigger_us, c.trigger_day
  FROM cohort AS c
  WHERE NOT c.`is_crossover`
    AND NOT c.`is_unknown_variant`
),
-- Each unit's latest row of opens in the analysis period before the as-of time.
last_1 AS (
  SELECT s.`user id` AS unit_id, max(TIMESTAMPDIFF(MICROSECOND, TIMESTAMP '1970-01-01 00:00:00', CONVERT_TZ(s.`opened at`, 'Europe/Amsterdam', '+00:00'))) AS last_us
  FROM `mail`.`opens` AS s
  WHERE s.`user id` IS NOT NULL AND TIMESTAMPDIFF(MICROSECOND, TIMESTAMP '1970-01-01 00:00:00', CONVERT_TZ(s.`opened at`, 'Europe/Amsterdam', '+00:00')) >= 1772319600000000 AND TIMESTAMPDIFF(MICROSECOND, TIMESTAMP '1970-01-01 00:00:00', CONVERT_TZ(s.`opened at`, 'Europe/Amsterdam', '+00:00')) < 1774994400000000
  GROUP BY s.`user id`
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
  SELECT 'exposures' AS kind, NULL AS reason, NULL AS source, variant AS variant, DATE(CONVERT_TZ(TIMESTAMPADD(MICROSECOND, ts_us, TIMESTAMP '1970-01-01 00:00:00'), '+00:00', 'Europe/Amsterdam')) AS day, count(*) AS row_count, count(DISTINCT unit_id) AS unit_count
  FROM exposure_rows
  GROUP BY variant, DATE(CONVERT_TZ(TIMESTAMPADD(MICROSECOND, ts_us, TIMESTAMP '1970-01-01 00:00:00'), '+00:00', 'Europe/Amsterdam'))
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
  SELECT 'ignored_outcome_rows' AS kind, 'null_unit' AS reason, 'opens' AS source, NULL AS variant, NULL AS day, null_unit AS row_count, NULL AS unit_count
  FROM nulls_1
  UNION ALL
  SELECT 'ignored_outcome_rows' AS kind, 'null_time' AS reason, 'opens' AS source, NULL AS variant, NULL AS day, null_time AS row_count, NULL AS unit_count
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
