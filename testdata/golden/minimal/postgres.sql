-- assay 0.1.0 per-variant statistics query for experiment minimal (spec fingerprint 9875bda0f4b16125)
-- Times are compared as integer microseconds since 1970-01-01 UTC; timestamps without a zone are read as UTC.
-- Exposures are read in [2026-05-01T00:00:00Z, 2026-05-29T00:00:00Z); outcome windows must have ended by 2026-05-29T00:00:00Z.
WITH
-- Exposure rows of assignments inside the analysis window; rows without a unit or time are ignored.
exposure_rows AS (
  SELECT
    x."visitor_id" AS unit_id,
    CAST(x."arm" AS TEXT) AS variant,
    CAST(EXTRACT(EPOCH FROM x."assigned_at") * 1000000 AS BIGINT) AS ts_us,
    TRUE AS qualifies
  FROM "analytics"."assignments" AS x
  WHERE x."visitor_id" IS NOT NULL AND x."assigned_at" IS NOT NULL
    AND CAST(EXTRACT(EPOCH FROM x."assigned_at") * 1000000 AS BIGINT) >= 1777593600000000 AND CAST(EXTRACT(EPOCH FROM x."assigned_at") * 1000000 AS BIGINT) < 1780012800000000
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
    CAST(TIMESTAMP '1970-01-01 00:00:00' + t.trigger_us * INTERVAL '1 microsecond' AS DATE) AS trigger_day,
    t.is_crossover,
    (t.variant IS NULL OR t.variant NOT IN ('control', 'big_button')) AS is_unknown_variant
  FROM triggers AS t
),
-- Eligible units: one variant only, a declared variant, and every eligibility rule met at the trigger.
eligible AS (
  SELECT c.unit_id, c.variant, c.trigger_us, c.trigger_day
  FROM cohort AS c
  WHERE NOT c."is_crossover"
    AND NOT c."is_unknown_variant"
),
-- One pass over checkouts for: m_checkouts_7d.
"pass_checkouts" AS (
  SELECT
    r.unit_id,
    -- m_checkouts_7d: count of rows in [trigger + 0d, trigger + 7d)
    count(CASE WHEN r.dt_us >= 0 AND r.dt_us < 604800000000 THEN 1 END) AS "m_checkouts_7d"
  FROM (
    SELECT e.unit_id, CAST(EXTRACT(EPOCH FROM s."completed_at") * 1000000 AS BIGINT) - e.trigger_us AS dt_us
    FROM eligible AS e
    JOIN "analytics"."checkouts" AS s ON s."visitor_id" = e.unit_id
  ) AS r
  WHERE r.dt_us >= 0 AND r.dt_us < 604800000000
  GROUP BY r.unit_id
),
-- One row per eligible unit; a unit without outcome rows counts as zero.
unit_values AS (
  SELECT
    e.unit_id,
    e.variant,
    e.trigger_day,
    (e.trigger_us + 604800000000 <= 1780012800000000) AS mature_7d,
    coalesce(p1."m_checkouts_7d", 0) AS "m_checkouts_7d"
  FROM eligible AS e
  LEFT JOIN "pass_checkouts" AS p1 ON p1.unit_id = e.unit_id
),
-- Centres: each variant's means, subtracted before the variance and covariance aggregates so
-- their partial sums stay small (numerically stable whatever the engine's merge order).
centres AS (
  SELECT
    u.variant,
    avg(CASE WHEN u.mature_7d THEN CAST(u."m_checkouts_7d" AS DOUBLE PRECISION) END) AS "c_checkouts_7d"
  FROM unit_values AS u
  GROUP BY u.variant
)
SELECT
  '9875bda0f4b16125' AS "spec_fingerprint",
  'as_of=2026-05-29T00:00:00Z' AS "compile_options",
  u.variant AS "variant",
  count(*) AS "units",
  -- checkouts_7d (primary, mean): mean per unit of count of rows; window [trigger + 0d, trigger + 7d), mature units only
  count(CASE WHEN u.mature_7d THEN 1 END) AS "checkouts_7d__n",
  CASE WHEN min(CASE WHEN u.mature_7d THEN CAST(u."m_checkouts_7d" AS DOUBLE PRECISION) END) = max(CASE WHEN u.mature_7d THEN CAST(u."m_checkouts_7d" AS DOUBLE PRECISION) END) THEN min(CASE WHEN u.mature_7d THEN CAST(u."m_checkouts_7d" AS DOUBLE PRECISION) END) ELSE min(c0."c_checkouts_7d") + avg((CASE WHEN u.mature_7d THEN CAST(u."m_checkouts_7d" AS DOUBLE PRECISION) END - c0."c_checkouts_7d")) END AS "checkouts_7d__mean",
  var_samp((CASE WHEN u.mature_7d THEN CAST(u."m_checkouts_7d" AS DOUBLE PRECISION) END - c0."c_checkouts_7d")) AS "checkouts_7d__var"
FROM unit_values AS u
JOIN centres AS c0 ON c0.variant = u.variant
GROUP BY u.variant
ORDER BY "variant"
;

-- assay 0.1.0 health query for experiment minimal (spec fingerprint 9875bda0f4b16125)
-- Times are compared as integer microseconds since 1970-01-01 UTC; timestamps without a zone are read as UTC.
-- Exposures are read in [2026-05-01T00:00:00Z, 2026-05-29T00:00:00Z); outcome windows must have ended by 2026-05-29T00:00:00Z.
WITH
-- Exposure rows of assignments inside the analysis window; rows without a unit or time are ignored.
exposure_rows AS (
  SELECT
    x."visitor_id" AS unit_id,
    CAST(x."arm" AS TEXT) AS variant,
    CAST(EXTRACT(EPOCH FROM x."assigned_at") * 1000000 AS BIGINT) AS ts_us,
    TRUE AS qualifies
  FROM "analytics"."assignments" AS x
  WHERE x."visitor_id" IS NOT NULL AND x."assigned_at" IS NOT NULL
    AND CAST(EXTRACT(EPOCH FROM x."assigned_at") * 1000000 AS BIGINT) >= 1777593600000000 AND CAST(EXTRACT(EPOCH FROM x."assigned_at") * 1000000 AS BIGINT) < 1780012800000000
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
    CAST(TIMESTAMP '1970-01-01 00:00:00' + t.trigger_us * INTERVAL '1 microsecond' AS DATE) AS trigger_day,
    t.is_crossover,
    (t.variant IS NULL OR t.variant NOT IN ('control', 'big_button')) AS is_unknown_variant
  FROM triggers AS t
),
-- Exposure rows outside the analysis window, or without a unit or time.
ignored_rows AS (
  SELECT
    count(CASE WHEN x."visitor_id" IS NULL THEN 1 END) AS null_unit,
    count(CASE WHEN x."assigned_at" IS NULL THEN 1 END) AS null_time,
    count(CASE WHEN CAST(EXTRACT(EPOCH FROM x."assigned_at") * 1000000 AS BIGINT) < 1777593600000000 THEN 1 END) AS before_start,
    count(CASE WHEN CAST(EXTRACT(EPOCH FROM x."assigned_at") * 1000000 AS BIGINT) >= 1780012800000000 THEN 1 END) AS after_end
  FROM "analytics"."assignments" AS x
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
  SELECT count(*) - count(s."visitor_id") AS null_unit, count(*) - count(s."completed_at") AS null_time
  FROM "analytics"."checkouts" AS s
),
-- Eligible units: one variant only, a declared variant, and every eligibility rule met at the trigger.
eligible AS (
  SELECT c.unit_id, c.variant, c.trigger_us, c.trigger_day
  FROM cohort AS c
  WHERE NOT c."is_crossover"
    AND NOT c."is_unknown_variant"
),
-- Each unit's latest row of checkouts in the analysis period before the as-of time.
last_1 AS (
  SELECT s."visitor_id" AS unit_id, max(CAST(EXTRACT(EPOCH FROM s."completed_at") * 1000000 AS BIGINT)) AS last_us
  FROM "analytics"."checkouts" AS s
  WHERE s."visitor_id" IS NOT NULL AND CAST(EXTRACT(EPOCH FROM s."completed_at") * 1000000 AS BIGINT) >= 1777593600000000 AND CAST(EXTRACT(EPOCH FROM s."completed_at") * 1000000 AS BIGINT) < 1780012800000000
  GROUP BY s."visitor_id"
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
  SELECT 'exposures' AS kind, NULL AS reason, NULL AS source, variant AS variant, CAST(TIMESTAMP '1970-01-01 00:00:00' + ts_us * INTERVAL '1 microsecond' AS DATE) AS day, count(*) AS row_count, count(DISTINCT unit_id) AS unit_count
  FROM exposure_rows
  GROUP BY variant, CAST(TIMESTAMP '1970-01-01 00:00:00' + ts_us * INTERVAL '1 microsecond' AS DATE)
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
  WHERE "is_crossover"
  GROUP BY variant
  UNION ALL
  SELECT 'excluded' AS kind, 'unknown_variant' AS reason, NULL AS source, variant AS variant, NULL AS day, count(*) AS row_count, count(*) AS unit_count
  FROM cohort
  WHERE "is_unknown_variant"
  GROUP BY variant
  UNION ALL
  SELECT 'excluded' AS kind, 'any' AS reason, NULL AS source, variant AS variant, NULL AS day, count(*) AS row_count, count(*) AS unit_count
  FROM cohort
  WHERE "is_crossover" OR "is_unknown_variant"
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
  UNION ALL
  SELECT 'no_outcome_rows' AS kind, NULL AS reason, NULL AS source, variant AS variant, NULL AS day, eligible_units AS row_count, none_any AS unit_count
  FROM no_outcomes
) AS h
ORDER BY h.kind, h.reason, h.source, h.variant, h.day
;
