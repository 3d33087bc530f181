-- assay 0.1.0 per-variant statistics query for experiment local-time (spec fingerprint 2c354e292afbe15a)
-- Times are compared as integer microseconds since 1970-01-01 UTC; timestamps without a zone are read as America/Chicago.
-- Exposures are read in [2026-03-02T06:00:00Z, 2026-03-30T05:00:00Z); outcome windows must have ended by 2026-03-30T05:00:00Z.
WITH
-- Exposure rows of views inside the analysis window; rows without a unit or time are ignored.
exposure_rows AS (
  SELECT
    x."visitor_id" AS unit_id,
    CAST(x."arm" AS VARCHAR) AS variant,
    DATE_PART(EPOCH_MICROSECOND, CONVERT_TIMEZONE('America/Chicago', 'UTC', x."viewed_at")) AS ts_us,
    coalesce(CAST(CONVERT_TIMEZONE('UTC', 'America/Chicago', TO_TIMESTAMP_NTZ(DATE_PART(EPOCH_MICROSECOND, CONVERT_TIMEZONE('America/Chicago', 'UTC', x."viewed_at")), 6)) AS DATE) >= CAST('2026-03-02' AS DATE), FALSE) AS qualifies
  FROM "shop"."page_views" AS x
  WHERE x."visitor_id" IS NOT NULL AND x."viewed_at" IS NOT NULL
    AND DATE_PART(EPOCH_MICROSECOND, CONVERT_TIMEZONE('America/Chicago', 'UTC', x."viewed_at")) >= 1772431200000000 AND DATE_PART(EPOCH_MICROSECOND, CONVERT_TIMEZONE('America/Chicago', 'UTC', x."viewed_at")) < 1774846800000000
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
-- Trigger: each unit's first qualifying exposure (a row qualifies when: local_date(viewed_at) >= CAST('2026-03-02' AS DATE)).
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
    CAST(CONVERT_TIMEZONE('UTC', 'America/Chicago', TO_TIMESTAMP_NTZ(t.trigger_us, 6)) AS DATE) AS trigger_day,
    t.is_crossover,
    (t.variant IS NULL OR t.variant NOT IN ('control', 'hours_banner')) AS is_unknown_variant
  FROM triggers AS t
),
-- Eligible units: one variant only, a declared variant, and every eligibility rule met at the trigger.
eligible AS (
  SELECT c.unit_id, c.variant, c.trigger_us, c.trigger_day
  FROM cohort AS c
  WHERE NOT c."is_crossover"
    AND NOT c."is_unknown_variant"
),
-- One pass over orders for: m_staffed_orders_14d, m_weekday_signups_14d, m_first_week_revenue.
"pass_orders" AS (
  SELECT
    r.unit_id,
    -- m_staffed_orders_14d: count of rows where local_hour(ordered_at) BETWEEN 9 AND 16 AND local_weekday(ordered_at) <= 5 in [trigger + 0d, trigger + 14d)
    count(CASE WHEN r.dt_us >= 0 AND r.dt_us < 1209600000000 AND (HOUR(CONVERT_TIMEZONE('UTC', 'America/Chicago', TO_TIMESTAMP_NTZ(DATE_PART(EPOCH_MICROSECOND, CONVERT_TIMEZONE('America/Chicago', 'UTC', r."c_ordered_at")), 6))) BETWEEN 9 AND 16 AND DAYOFWEEKISO(CONVERT_TIMEZONE('UTC', 'America/Chicago', TO_TIMESTAMP_NTZ(DATE_PART(EPOCH_MICROSECOND, CONVERT_TIMEZONE('America/Chicago', 'UTC', r."c_ordered_at")), 6))) <= 5) THEN 1 END) AS "m_staffed_orders_14d",
    -- m_weekday_signups_14d: count of rows where local_weekday(ordered_at) >= 6 AND local_date(ordered_at) <> CAST('2026-03-08' AS DATE) in [trigger + 0d, trigger + 14d)
    count(CASE WHEN r.dt_us >= 0 AND r.dt_us < 1209600000000 AND (DAYOFWEEKISO(CONVERT_TIMEZONE('UTC', 'America/Chicago', TO_TIMESTAMP_NTZ(DATE_PART(EPOCH_MICROSECOND, CONVERT_TIMEZONE('America/Chicago', 'UTC', r."c_ordered_at")), 6))) >= 6 AND CAST(CONVERT_TIMEZONE('UTC', 'America/Chicago', TO_TIMESTAMP_NTZ(DATE_PART(EPOCH_MICROSECOND, CONVERT_TIMEZONE('America/Chicago', 'UTC', r."c_ordered_at")), 6)) AS DATE) <> CAST('2026-03-08' AS DATE)) THEN 1 END) AS "m_weekday_signups_14d",
    -- m_first_week_revenue: sum of CASE WHEN local_week(ordered_at) = CAST('2026-03-02' AS DATE) THEN total ELSE 0 END in [trigger + 0d, trigger + 14d)
    CAST(sum(CASE WHEN r.dt_us >= 0 AND r.dt_us < 1209600000000 AND CAST(CASE WHEN DATEADD(day, 1 - DAYOFWEEKISO(CONVERT_TIMEZONE('UTC', 'America/Chicago', TO_TIMESTAMP_NTZ(DATE_PART(EPOCH_MICROSECOND, CONVERT_TIMEZONE('America/Chicago', 'UTC', r."c_ordered_at")), 6))), CAST(CONVERT_TIMEZONE('UTC', 'America/Chicago', TO_TIMESTAMP_NTZ(DATE_PART(EPOCH_MICROSECOND, CONVERT_TIMEZONE('America/Chicago', 'UTC', r."c_ordered_at")), 6)) AS DATE)) = CAST('2026-03-02' AS DATE) THEN r."c_total" ELSE 0 END AS DOUBLE) - CAST(CASE WHEN DATEADD(day, 1 - DAYOFWEEKISO(CONVERT_TIMEZONE('UTC', 'America/Chicago', TO_TIMESTAMP_NTZ(DATE_PART(EPOCH_MICROSECOND, CONVERT_TIMEZONE('America/Chicago', 'UTC', r."c_ordered_at")), 6))), CAST(CONVERT_TIMEZONE('UTC', 'America/Chicago', TO_TIMESTAMP_NTZ(DATE_PART(EPOCH_MICROSECOND, CONVERT_TIMEZONE('America/Chicago', 'UTC', r."c_ordered_at")), 6)) AS DATE)) = CAST('2026-03-02' AS DATE) THEN r."c_total" ELSE 0 END AS DOUBLE) = 0 THEN CAST(CAST(CASE WHEN DATEADD(day, 1 - DAYOFWEEKISO(CONVERT_TIMEZONE('UTC', 'America/Chicago', TO_TIMESTAMP_NTZ(DATE_PART(EPOCH_MICROSECOND, CONVERT_TIMEZONE('America/Chicago', 'UTC', r."c_ordered_at")), 6))), CAST(CONVERT_TIMEZONE('UTC', 'America/Chicago', TO_TIMESTAMP_NTZ(DATE_PART(EPOCH_MICROSECOND, CONVERT_TIMEZONE('America/Chicago', 'UTC', r."c_ordered_at")), 6)) AS DATE)) = CAST('2026-03-02' AS DATE) THEN r."c_total" ELSE 0 END AS DOUBLE) AS NUMBER(38, 10)) END) AS DOUBLE) AS "m_first_week_revenue",
    count(CASE WHEN r.dt_us >= 0 AND r.dt_us < 1209600000000 AND NOT (CAST(CASE WHEN DATEADD(day, 1 - DAYOFWEEKISO(CONVERT_TIMEZONE('UTC', 'America/Chicago', TO_TIMESTAMP_NTZ(DATE_PART(EPOCH_MICROSECOND, CONVERT_TIMEZONE('America/Chicago', 'UTC', r."c_ordered_at")), 6))), CAST(CONVERT_TIMEZONE('UTC', 'America/Chicago', TO_TIMESTAMP_NTZ(DATE_PART(EPOCH_MICROSECOND, CONVERT_TIMEZONE('America/Chicago', 'UTC', r."c_ordered_at")), 6)) AS DATE)) = CAST('2026-03-02' AS DATE) THEN r."c_total" ELSE 0 END AS DOUBLE) - CAST(CASE WHEN DATEADD(day, 1 - DAYOFWEEKISO(CONVERT_TIMEZONE('UTC', 'America/Chicago', TO_TIMESTAMP_NTZ(DATE_PART(EPOCH_MICROSECOND, CONVERT_TIMEZONE('America/Chicago', 'UTC', r."c_ordered_at")), 6))), CAST(CONVERT_TIMEZONE('UTC', 'America/Chicago', TO_TIMESTAMP_NTZ(DATE_PART(EPOCH_MICROSECOND, CONVERT_TIMEZONE('America/Chicago', 'UTC', r."c_ordered_at")), 6)) AS DATE)) = CAST('2026-03-02' AS DATE) THEN r."c_total" ELSE 0 END AS DOUBLE) = 0) THEN 1 END) AS "m_first_week_revenue__nonfinite"
  FROM (
    SELECT e.unit_id, DATE_PART(EPOCH_MICROSECOND, CONVERT_TIMEZONE('America/Chicago', 'UTC', s."ordered_at")) - e.trigger_us AS dt_us, s."ordered_at" AS "c_ordered_at", s."total" AS "c_total"
    FROM eligible AS e
    JOIN "shop"."orders" AS s ON s."visitor_id" = e.unit_id
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
    (e.trigger_us + 1209600000000 <= 1774846800000000) AS mature_14d,
    coalesce(p1."m_staffed_orders_14d", 0) AS "m_staffed_orders_14d",
    coalesce(p1."m_weekday_signups_14d", 0) AS "m_weekday_signups_14d",
    coalesce(p1."m_first_week_revenue", 0) AS "m_first_week_revenue",
    coalesce(p1."m_first_week_revenue__nonfinite", 0) AS "m_first_week_revenue__nonfinite"
  FROM eligible AS e
  LEFT JOIN "pass_orders" AS p1 ON p1.unit_id = e.unit_id
),
-- Centres: each variant's means, subtracted before the variance and covariance aggregates so
-- their partial sums stay small (numerically stable whatever the engine's merge order).
centres AS (
  SELECT
    u.variant,
    avg(CASE WHEN u.mature_14d THEN CAST(u."m_staffed_orders_14d" AS DOUBLE) END) AS "c_staffed_orders_14d",
    avg(CASE WHEN u.mature_14d THEN CAST(u."m_weekday_signups_14d" AS DOUBLE) END) AS "c_weekday_signups_14d",
    avg(CASE WHEN u.mature_14d THEN CAST(u."m_first_week_revenue" AS DOUBLE) END) AS "c_first_week_revenue"
  FROM unit_values AS u
  GROUP BY u.variant
)
SELECT
  '2c354e292afbe15a' AS "spec_fingerprint",
  'as_of=2026-03-30T05:00:00Z' AS "compile_options",
  u.variant AS "variant",
  count(*) AS "units",
  -- staffed_orders_14d (primary, mean): mean per unit of count of rows where local_hour(ordered_at) BETWEEN 9 AND 16 AND local_weekday(ordered_at) <= 5; window [trigger + 0d, trigger + 14d), mature units only
  count(CASE WHEN u.mature_14d THEN 1 END) AS "staffed_orders_14d__n",
  CASE WHEN min(CASE WHEN u.mature_14d THEN CAST(u."m_staffed_orders_14d" AS DOUBLE) END) = max(CASE WHEN u.mature_14d THEN CAST(u."m_staffed_orders_14d" AS DOUBLE) END) THEN min(CASE WHEN u.mature_14d THEN CAST(u."m_staffed_orders_14d" AS DOUBLE) END) ELSE min(c0."c_staffed_orders_14d") + avg((CASE WHEN u.mature_14d THEN CAST(u."m_staffed_orders_14d" AS DOUBLE) END - c0."c_staffed_orders_14d")) END AS "staffed_orders_14d__mean",
  VAR_SAMP((CASE WHEN u.mature_14d THEN CAST(u."m_staffed_orders_14d" AS DOUBLE) END - c0."c_staffed_orders_14d")) AS "staffed_orders_14d__var",
  -- weekday_signups_14d (secondary, mean): mean per unit of count of rows where local_weekday(ordered_at) >= 6 AND local_date(ordered_at) <> CAST('2026-03-08' AS DATE); window [trigger + 0d, trigger + 14d), mature units only
  count(CASE WHEN u.mature_14d THEN 1 END) AS "weekday_signups_14d__n",
  CASE WHEN min(CASE WHEN u.mature_14d THEN CAST(u."m_weekday_signups_14d" AS DOUBLE) END) = max(CASE WHEN u.mature_14d THEN CAST(u."m_weekday_signups_14d" AS DOUBLE) END) THEN min(CASE WHEN u.mature_14d THEN CAST(u."m_weekday_signups_14d" AS DOUBLE) END) ELSE min(c0."c_weekday_signups_14d") + avg((CASE WHEN u.mature_14d THEN CAST(u."m_weekday_signups_14d" AS DOUBLE) END - c0."c_weekday_signups_14d")) END AS "weekday_signups_14d__mean",
  VAR_SAMP((CASE WHEN u.mature_14d THEN CAST(u."m_weekday_signups_14d" AS DOUBLE) END - c0."c_weekday_signups_14d")) AS "weekday_signups_14d__var",
  -- first_week_revenue (secondary, mean): mean per unit of sum of CASE WHEN local_week(ordered_at) = CAST('2026-03-02' AS DATE) THEN total ELSE 0 END; window [trigger + 0d, trigger + 14d), mature units only
  count(CASE WHEN u.mature_14d THEN 1 END) AS "first_week_revenue__n",
  sum(u."m_first_week_revenue__nonfinite") AS "first_week_revenue__nonfinite_rows",
  CASE WHEN min(CASE WHEN u.mature_14d THEN CAST(u."m_first_week_revenue" AS DOUBLE) END) = max(CASE WHEN u.mature_14d THEN CAST(u."m_first_week_revenue" AS DOUBLE) END) THEN min(CASE WHEN u.mature_14d THEN CAST(u."m_first_week_revenue" AS DOUBLE) END) ELSE min(c0."c_first_week_revenue") + avg((CASE WHEN u.mature_14d THEN CAST(u."m_first_week_revenue" AS DOUBLE) END - c0."c_first_week_revenue")) END AS "first_week_revenue__mean",
  VAR_SAMP((CASE WHEN u.mature_14d THEN CAST(u."m_first_week_revenue" AS DOUBLE) END - c0."c_first_week_revenue")) AS "first_week_revenue__var"
FROM unit_values AS u
JOIN centres AS c0 ON c0.variant = u.variant
GROUP BY u.variant
ORDER BY "variant"
;

-- assay 0.1.0 health query for experiment local-time (spec fingerprint 2c354e292afbe15a)
-- Times are compared as integer microseconds since 1970-01-01 UTC; timestamps without a zone are read as America/Chicago.
-- Exposures are read in [2026-03-02T06:00:00Z, 2026-03-30T05:00:00Z); outcome windows must have ended by 2026-03-30T05:00:00Z.
WITH
-- Exposure rows of views inside the analysis window; rows without a unit or time are ignored.
exposure_rows AS (
  SELECT
    x."visitor_id" AS unit_id,
    CAST(x."arm" AS VARCHAR) AS variant,
    DATE_PART(EPOCH_MICROSECOND, CONVERT_TIMEZONE('America/Chicago', 'UTC', x."viewed_at")) AS ts_us,
    coalesce(CAST(CONVERT_TIMEZONE('UTC', 'America/Chicago', TO_TIMESTAMP_NTZ(DATE_PART(EPOCH_MICROSECOND, CONVERT_TIMEZONE('America/Chicago', 'UTC', x."viewed_at")), 6)) AS DATE) >= CAST('2026-03-02' AS DATE), FALSE) AS qualifies
  FROM "shop"."page_views" AS x
  WHERE x."visitor_id" IS NOT NULL AND x."viewed_at" IS NOT NULL
    AND DATE_PART(EPOCH_MICROSECOND, CONVERT_TIMEZONE('America/Chicago', 'UTC', x."viewed_at")) >= 1772431200000000 AND DATE_PART(EPOCH_MICROSECOND, CONVERT_TIMEZONE('America/Chicago', 'UTC', x."viewed_at")) < 1774846800000000
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
-- Trigger: each unit's first qualifying exposure (a row qualifies when: local_date(viewed_at) >= CAST('2026-03-02' AS DATE)).
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
    CAST(CONVERT_TIMEZONE('UTC', 'America/Chicago', TO_TIMESTAMP_NTZ(t.trigger_us, 6)) AS DATE) AS trigger_day,
    t.is_crossover,
    (t.variant IS NULL OR t.variant NOT IN ('control', 'hours_banner')) AS is_unknown_variant
  FROM triggers AS t
),
-- Exposure rows outside the analysis window, or without a unit or time.
ignored_rows AS (
  SELECT
    count(CASE WHEN x."visitor_id" IS NULL THEN 1 END) AS null_unit,
    count(CASE WHEN x."viewed_at" IS NULL THEN 1 END) AS null_time,
    count(CASE WHEN DATE_PART(EPOCH_MICROSECOND, CONVERT_TIMEZONE('America/Chicago', 'UTC', x."viewed_at")) < 1772431200000000 THEN 1 END) AS before_start,
    count(CASE WHEN DATE_PART(EPOCH_MICROSECOND, CONVERT_TIMEZONE('America/Chicago', 'UTC', x."viewed_at")) >= 1774846800000000 THEN 1 END) AS after_end
  FROM "shop"."page_views" AS x
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
  SELECT count(*) - count(s."visitor_id") AS null_unit, count(*) - count(s."ordered_at") AS null_time
  FROM "shop"."orders" AS s
),
-- Eligible units: one variant only, a declared variant, and every eligibility rule met at the trigger.
eligible AS (
  SELECT c.unit_id, c.variant, c.trigger_us, c.trigger_day
  FROM cohort AS c
  WHERE NOT c."is_crossover"
    AND NOT c."is_unknown_variant"
),
-- Each unit's latest row of orders in the analysis period before the as-of time.
last_1 AS (
  SELECT s."visitor_id" AS unit_id, max(DATE_PART(EPOCH_MICROSECOND, CONVERT_TIMEZONE('America/Chicago', 'UTC', s."ordered_at"))) AS last_us
  FROM "shop"."orders" AS s
  WHERE s."visitor_id" IS NOT NULL AND DATE_PART(EPOCH_MICROSECOND, CONVERT_TIMEZONE('America/Chicago', 'UTC', s."ordered_at")) >= 1772431200000000 AND DATE_PART(EPOCH_MICROSECOND, CONVERT_TIMEZONE('America/Chicago', 'UTC', s."ordered_at")) < 1774846800000000
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
  SELECT 'exposures' AS kind, NULL AS reason, NULL AS source, variant AS variant, CAST(CONVERT_TIMEZONE('UTC', 'America/Chicago', TO_TIMESTAMP_NTZ(ts_us, 6)) AS DATE) AS day, count(*) AS row_count, count(DISTINCT unit_id) AS unit_count
  FROM exposure_rows
  GROUP BY variant, CAST(CONVERT_TIMEZONE('UTC', 'America/Chicago', TO_TIMESTAMP_NTZ(ts_us, 6)) AS DATE)
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
