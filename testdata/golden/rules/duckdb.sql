-- assay 0.1.0 cohort table query for experiment rules (spec fingerprint 063af84941e2ba0d)
-- Times are compared as integer microseconds since 1970-01-01 UTC; timestamps without a zone are read as UTC.
-- Exposures are read in [2026-02-01T00:00:00Z, 2026-03-01T00:00:00Z); outcome windows must have ended by 2026-03-01T00:00:00Z.
-- File paths are relative to the spec's directory.
-- Computed once per run; the per-variant and health queries read it.
CREATE OR REPLACE TEMPORARY TABLE "assay_cohort" AS
WITH
-- Exposure rows of flags inside the analysis window; rows without a unit or time are ignored.
exposure_rows AS NOT MATERIALIZED (
  SELECT
    x."account" AS unit_id,
    CAST(x."variant" AS VARCHAR) AS variant,
    epoch_us(x."seen_at") AS ts_us,
    coalesce(x."screen" = 'billing' AND x."platform" <> 'test', FALSE) AS qualifies
  FROM read_csv('flags.csv') AS x
  WHERE x."account" IS NOT NULL AND x."seen_at" IS NOT NULL
    AND epoch_us(x."seen_at") >= 1769904000000000 AND epoch_us(x."seen_at") < 1772323200000000
    AND x."seen_at" >= TIMESTAMP '2026-01-30 00:00:00' AND x."seen_at" < TIMESTAMP '2026-03-03 00:00:00'
),
-- One row per exposed unit: its first qualifying exposure (the trigger) and the least and
-- greatest variant it was seen in (when they differ, the unit crossed over).
exposed_units AS (
  SELECT
    unit_id,
    min(CASE WHEN qualifies THEN ts_us END) AS trigger_us,
    min(variant) AS variant_lo,
    max(variant) AS variant_hi,
    (count(variant) = count(*)) AS variant_always_set
  FROM exposure_rows
  GROUP BY unit_id
),
-- Trigger: each unit's first qualifying exposure (a row qualifies when: screen = 'billing' AND platform <> 'test').
-- A unit always seen in one variant takes it; any other unit takes the least variant among
-- its qualifying rows at the trigger time.
triggers AS (
  SELECT u.unit_id, u.variant_lo AS variant, u.trigger_us, FALSE AS is_crossover
  FROM exposed_units AS u
  WHERE u.trigger_us IS NOT NULL AND u.variant_lo = u.variant_hi AND u.variant_always_set
  UNION ALL
  SELECT u.unit_id, min(r.variant) AS variant, u.trigger_us, coalesce(u.variant_lo <> u.variant_hi, FALSE) AS is_crossover
  FROM exposed_units AS u
  JOIN exposure_rows AS r ON r.unit_id = u.unit_id AND r.ts_us = u.trigger_us AND r.qualifies
  WHERE NOT coalesce(u.variant_lo = u.variant_hi AND u.variant_always_set, FALSE)
  GROUP BY u.unit_id, u.trigger_us, u.variant_lo, u.variant_hi
),
-- Rule active: eligible when the unit has row in logins in [trigger - 30d, trigger + 0d).
rule_1 AS (
  SELECT DISTINCT t.unit_id
  FROM triggers AS t
  JOIN read_parquet('logins.parquet') AS s ON s."account" = t.unit_id
  WHERE epoch_us(s."at") >= t.trigger_us - 2592000000000
    AND epoch_us(s."at") < t.trigger_us + 0
    AND s."at" >= TIMESTAMP '2025-12-31 00:00:00' AND s."at" < TIMESTAMP '2026-03-03 00:00:00'
    AND coalesce(TRUE, FALSE)
),
-- Rule no_open_ticket: eligible when the unit has no row in tickets in [trigger - 7d, trigger - 1h) where severity >= 3.
rule_2 AS (
  SELECT DISTINCT t.unit_id
  FROM triggers AS t
  JOIN read_parquet('tickets.parquet') AS s ON s."account" = t.unit_id
  WHERE epoch_us(s."opened_at") >= t.trigger_us - 604800000000
    AND epoch_us(s."opened_at") < t.trigger_us - 3600000000
    AND s."opened_at" >= TIMESTAMP '2026-01-23 00:00:00' AND s."opened_at" < TIMESTAMP '2026-03-02 23:00:00'
    AND coalesce(s."severity" >= 3, FALSE)
),
-- Rule not_internal: eligible when the unit's attributes in accounts at the trigger satisfy: country <> 'XX' AND tier IS NOT NULL.
rule_3 AS (
  SELECT DISTINCT t.unit_id
  FROM triggers AS t
  JOIN read_parquet('accounts.parquet') AS s ON s."account" = t.unit_id
  WHERE coalesce(s."country" <> 'XX' AND s."tier" IS NOT NULL, FALSE)
),
-- Rule paying: eligible when the unit's attributes in plans at the trigger satisfy: plan <> 'free' AND seats > 0.
rule_4 AS (
  SELECT DISTINCT t.unit_id
  FROM triggers AS t
  JOIN (
    SELECT a."plan", a."seats", row_number() OVER (PARTITION BY t2.unit_id ORDER BY epoch_us(a."valid_from") DESC, a."account", a."valid_from", a."plan", a."seats") AS assay_rn, t2.unit_id AS assay_unit
    FROM triggers AS t2
    JOIN read_parquet('plans.parquet') AS a ON a."account" = t2.unit_id
    WHERE epoch_us(a."valid_from") <= t2.trigger_us
  ) AS s ON s.assay_unit = t.unit_id AND s.assay_rn = 1
  WHERE coalesce(s."plan" <> 'free' AND s."seats" > 0, FALSE)
),
-- Every triggered unit with the reasons it may be excluded.
cohort AS (
  SELECT
    t.unit_id,
    t.variant,
    t.trigger_us,
    CAST(make_timestamp(t.trigger_us) AS DATE) AS trigger_day,
    t.is_crossover,
    (t.variant IS NULL OR t.variant NOT IN ('control', 'reminder')) AS is_unknown_variant,
    (r1.unit_id IS NULL) AS "fails_active",
    (r2.unit_id IS NOT NULL) AS "fails_no_open_ticket",
    (r3.unit_id IS NULL) AS "fails_not_internal",
    (r4.unit_id IS NULL) AS "fails_paying"
  FROM triggers AS t
  LEFT JOIN rule_1 AS r1 ON r1.unit_id = t.unit_id
  LEFT JOIN rule_2 AS r2 ON r2.unit_id = t.unit_id
  LEFT JOIN rule_3 AS r3 ON r3.unit_id = t.unit_id
  LEFT JOIN rule_4 AS r4 ON r4.unit_id = t.unit_id
),
-- Exposed units without a qualifying exposure, kept with no trigger for the health counts.
never_triggered AS (
  SELECT u.unit_id FROM exposed_units AS u WHERE u.trigger_us IS NULL
)
SELECT unit_id, variant, trigger_us, trigger_day, is_crossover, is_unknown_variant, "fails_active", "fails_no_open_ticket", "fails_not_internal", "fails_paying"
FROM cohort
UNION ALL
SELECT n.unit_id, NULL AS variant, NULL AS trigger_us, NULL AS trigger_day, NULL AS is_crossover, NULL AS is_unknown_variant, NULL AS "fails_active", NULL AS "fails_no_open_ticket", NULL AS "fails_not_internal", NULL AS "fails_paying"
FROM never_triggered AS n
;

-- assay 0.1.0 per-variant statistics query for experiment rules (spec fingerprint 063af84941e2ba0d)
-- Times are compared as integer microseconds since 1970-01-01 UTC; timestamps without a zone are read as UTC.
-- Exposures are read in [2026-02-01T00:00:00Z, 2026-03-01T00:00:00Z); outcome windows must have ended by 2026-03-01T00:00:00Z.
-- File paths are relative to the spec's directory.
-- Reads the cohort table of the setup statement.
WITH
-- Every triggered unit with the reasons it may be excluded, from the cohort table.
cohort AS (
  SELECT unit_id, variant, trigger_us, trigger_day, is_crossover, is_unknown_variant, "fails_active", "fails_no_open_ticket", "fails_not_internal", "fails_paying"
  FROM temp.main."assay_cohort"
  WHERE trigger_us IS NOT NULL
),
-- Eligible units: one variant only, a declared variant, and every eligibility rule met at the trigger.
eligible AS (
  SELECT c.unit_id, c.variant, c.trigger_us, c.trigger_day
  FROM cohort AS c
  WHERE NOT c.is_crossover
    AND NOT c.is_unknown_variant
    AND NOT c."fails_active"
    AND NOT c."fails_no_open_ticket"
    AND NOT c."fails_not_internal"
    AND NOT c."fails_paying"
),
-- One pass over logins for: m_logins_30d.
"pass_logins" AS (
  SELECT
    r.unit_id,
    -- m_logins_30d: count of rows in [trigger + 0d, trigger + 30d)
    count(CASE WHEN r.dt_us >= 0 AND r.dt_us < 2592000000000 THEN 1 END) AS "m_logins_30d"
  FROM (
    SELECT e.unit_id, epoch_us(s."at") - e.trigger_us AS dt_us
    FROM eligible AS e
    JOIN read_parquet('logins.parquet') AS s ON s."account" = e.unit_id
    -- static range (widened by two days) so the engine can skip data early
    WHERE s."at" >= TIMESTAMP '2026-01-30 00:00:00' AND s."at" < TIMESTAMP '2026-04-02 00:00:00'
  ) AS r
  WHERE r.dt_us >= 0 AND r.dt_us < 2592000000000
  GROUP BY r.unit_id
),
-- One pass over tickets for: m_tickets_30d.
"pass_tickets" AS (
  SELECT
    r.unit_id,
    -- m_tickets_30d: count of rows in [trigger + 0d, trigger + 30d)
    count(CASE WHEN r.dt_us >= 0 AND r.dt_us < 2592000000000 THEN 1 END) AS "m_tickets_30d"
  FROM (
    SELECT e.unit_id, epoch_us(s."opened_at") - e.trigger_us AS dt_us
    FROM eligible AS e
    JOIN read_parquet('tickets.parquet') AS s ON s."account" = e.unit_id
    -- static range (widened by two days) so the engine can skip data early
    WHERE s."opened_at" >= TIMESTAMP '2026-01-30 00:00:00' AND s."opened_at" < TIMESTAMP '2026-04-02 00:00:00'
  ) AS r
  WHERE r.dt_us >= 0 AND r.dt_us < 2592000000000
  GROUP BY r.unit_id
),
-- One row per eligible unit; a unit without outcome rows counts as zero.
unit_values AS (
  SELECT
    e.unit_id,
    e.variant,
    e.trigger_day,
    (e.trigger_us + 2592000000000 <= 1772323200000000) AS mature_30d,
    coalesce(p1."m_logins_30d", 0) AS "m_logins_30d",
    coalesce(p2."m_tickets_30d", 0) AS "m_tickets_30d"
  FROM eligible AS e
  LEFT JOIN "pass_logins" AS p1 ON p1.unit_id = e.unit_id
  LEFT JOIN "pass_tickets" AS p2 ON p2.unit_id = e.unit_id
),
-- Centres: pooled means, subtracted before the variance and covariance aggregates so their
-- partial sums stay small (numerically stable whatever the engine's merge order).
centres AS (
  SELECT
    avg(CASE WHEN u.mature_30d THEN CAST(u."m_logins_30d" AS DOUBLE) END) AS "c_logins_30d",
    avg(CASE WHEN u.mature_30d THEN CAST(u."m_tickets_30d" AS DOUBLE) END) AS "c_tickets_30d"
  FROM unit_values AS u
)
SELECT
  '063af84941e2ba0d' AS spec_fingerprint,
  u.variant AS variant,
  count(*) AS units,
  -- logins_30d (primary, mean): mean per unit of count of rows; window [trigger + 0d, trigger + 30d), mature units only
  count(CASE WHEN u.mature_30d THEN 1 END) AS "logins_30d__n",
  CASE WHEN min(CASE WHEN u.mature_30d THEN CAST(u."m_logins_30d" AS DOUBLE) END) = max(CASE WHEN u.mature_30d THEN CAST(u."m_logins_30d" AS DOUBLE) END) THEN min(CASE WHEN u.mature_30d THEN CAST(u."m_logins_30d" AS DOUBLE) END) ELSE min(c0."c_logins_30d") + avg((CASE WHEN u.mature_30d THEN CAST(u."m_logins_30d" AS DOUBLE) END - c0."c_logins_30d")) END AS "logins_30d__mean",
  var_samp((CASE WHEN u.mature_30d THEN CAST(u."m_logins_30d" AS DOUBLE) END - c0."c_logins_30d")) AS "logins_30d__var",
  -- tickets_30d (guard, mean): mean per unit of count of rows; window [trigger + 0d, trigger + 30d), mature units only
  count(CASE WHEN u.mature_30d THEN 1 END) AS "tickets_30d__n",
  CASE WHEN min(CASE WHEN u.mature_30d THEN CAST(u."m_tickets_30d" AS DOUBLE) END) = max(CASE WHEN u.mature_30d THEN CAST(u."m_tickets_30d" AS DOUBLE) END) THEN min(CASE WHEN u.mature_30d THEN CAST(u."m_tickets_30d" AS DOUBLE) END) ELSE min(c0."c_tickets_30d") + avg((CASE WHEN u.mature_30d THEN CAST(u."m_tickets_30d" AS DOUBLE) END - c0."c_tickets_30d")) END AS "tickets_30d__mean",
  var_samp((CASE WHEN u.mature_30d THEN CAST(u."m_tickets_30d" AS DOUBLE) END - c0."c_tickets_30d")) AS "tickets_30d__var"
FROM unit_values AS u
CROSS JOIN centres AS c0
GROUP BY u.variant
ORDER BY u.variant
;

-- assay 0.1.0 health query for experiment rules (spec fingerprint 063af84941e2ba0d)
-- Times are compared as integer microseconds since 1970-01-01 UTC; timestamps without a zone are read as UTC.
-- Exposures are read in [2026-02-01T00:00:00Z, 2026-03-01T00:00:00Z); outcome windows must have ended by 2026-03-01T00:00:00Z.
-- File paths are relative to the spec's directory.
-- Reads the cohort table of the setup statement.
WITH
-- Exposure rows of flags inside the analysis window; rows without a unit or time are ignored.
exposure_rows AS NOT MATERIALIZED (
  SELECT
    x."account" AS unit_id,
    CAST(x."variant" AS VARCHAR) AS variant,
    epoch_us(x."seen_at") AS ts_us,
    coalesce(x."screen" = 'billing' AND x."platform" <> 'test', FALSE) AS qualifies
  FROM read_csv('flags.csv') AS x
  WHERE x."account" IS NOT NULL AND x."seen_at" IS NOT NULL
    AND epoch_us(x."seen_at") >= 1769904000000000 AND epoch_us(x."seen_at") < 1772323200000000
    AND x."seen_at" >= TIMESTAMP '2026-01-30 00:00:00' AND x."seen_at" < TIMESTAMP '2026-03-03 00:00:00'
),
-- Every triggered unit with the reasons it may be excluded, from the cohort table.
cohort AS (
  SELECT unit_id, variant, trigger_us, trigger_day, is_crossover, is_unknown_variant, "fails_active", "fails_no_open_ticket", "fails_not_internal", "fails_paying"
  FROM temp.main."assay_cohort"
  WHERE trigger_us IS NOT NULL
),
-- Exposure rows outside the analysis window, or without a unit or time.
ignored_rows AS (
  SELECT
    count(CASE WHEN x."account" IS NULL THEN 1 END) AS null_unit,
    count(CASE WHEN x."seen_at" IS NULL THEN 1 END) AS null_time,
    count(CASE WHEN epoch_us(x."seen_at") < 1769904000000000 THEN 1 END) AS before_start,
    count(CASE WHEN epoch_us(x."seen_at") >= 1772323200000000 THEN 1 END) AS after_end
  FROM read_csv('flags.csv') AS x
),
-- Rows of logins that no metric or rule can use: no unit or no time.
nulls_1 AS (
  SELECT count(*) - count(s."account") AS null_unit, count(*) - count(s."at") AS null_time
  FROM read_parquet('logins.parquet') AS s
),
-- Rows of tickets that no metric or rule can use: no unit or no time.
nulls_2 AS (
  SELECT count(*) - count(s."account") AS null_unit, count(*) - count(s."opened_at") AS null_time
  FROM read_parquet('tickets.parquet') AS s
)
SELECT h.kind, h.reason, h.variant, h.day, h.row_count, h.unit_count FROM (
  SELECT 'exposures' AS kind, NULL AS reason, variant AS variant, CAST(make_timestamp(ts_us) AS DATE) AS day, count(*) AS row_count, count(DISTINCT unit_id) AS unit_count
  FROM exposure_rows
  GROUP BY variant, CAST(make_timestamp(ts_us) AS DATE)
  UNION ALL
  SELECT 'triggers' AS kind, NULL AS reason, variant AS variant, trigger_day AS day, count(*) AS row_count, count(*) AS unit_count
  FROM cohort
  GROUP BY variant, trigger_day
  UNION ALL
  SELECT 'never_triggered' AS kind, NULL AS reason, NULL AS variant, NULL AS day, count(*) AS row_count, count(*) AS unit_count
  FROM temp.main."assay_cohort" AS u
  WHERE u.trigger_us IS NULL
  UNION ALL
  SELECT 'excluded' AS kind, 'crossover' AS reason, variant AS variant, NULL AS day, count(*) AS row_count, count(*) AS unit_count
  FROM cohort
  WHERE is_crossover
  GROUP BY variant
  UNION ALL
  SELECT 'excluded' AS kind, 'unknown_variant' AS reason, variant AS variant, NULL AS day, count(*) AS row_count, count(*) AS unit_count
  FROM cohort
  WHERE is_unknown_variant
  GROUP BY variant
  UNION ALL
  SELECT 'excluded' AS kind, 'rule:active' AS reason, variant AS variant, NULL AS day, count(*) AS row_count, count(*) AS unit_count
  FROM cohort
  WHERE "fails_active"
  GROUP BY variant
  UNION ALL
  SELECT 'excluded' AS kind, 'rule:no_open_ticket' AS reason, variant AS variant, NULL AS day, count(*) AS row_count, count(*) AS unit_count
  FROM cohort
  WHERE "fails_no_open_ticket"
  GROUP BY variant
  UNION ALL
  SELECT 'excluded' AS kind, 'rule:not_internal' AS reason, variant AS variant, NULL AS day, count(*) AS row_count, count(*) AS unit_count
  FROM cohort
  WHERE "fails_not_internal"
  GROUP BY variant
  UNION ALL
  SELECT 'excluded' AS kind, 'rule:paying' AS reason, variant AS variant, NULL AS day, count(*) AS row_count, count(*) AS unit_count
  FROM cohort
  WHERE "fails_paying"
  GROUP BY variant
  UNION ALL
  SELECT 'excluded' AS kind, 'any' AS reason, variant AS variant, NULL AS day, count(*) AS row_count, count(*) AS unit_count
  FROM cohort
  WHERE is_crossover OR is_unknown_variant OR "fails_active" OR "fails_no_open_ticket" OR "fails_not_internal" OR "fails_paying"
  GROUP BY variant
  UNION ALL
  SELECT 'ignored_rows' AS kind, 'null_unit' AS reason, NULL AS variant, NULL AS day, null_unit AS row_count, NULL AS unit_count
  FROM ignored_rows
  UNION ALL
  SELECT 'ignored_rows' AS kind, 'null_time' AS reason, NULL AS variant, NULL AS day, null_time AS row_count, NULL AS unit_count
  FROM ignored_rows
  UNION ALL
  SELECT 'ignored_rows' AS kind, 'before_start' AS reason, NULL AS variant, NULL AS day, before_start AS row_count, NULL AS unit_count
  FROM ignored_rows
  UNION ALL
  SELECT 'ignored_rows' AS kind, 'after_end' AS reason, NULL AS variant, NULL AS day, after_end AS row_count, NULL AS unit_count
  FROM ignored_rows
  UNION ALL
  SELECT 'ignored_outcome_rows' AS kind, 'logins:null_unit' AS reason, NULL AS variant, NULL AS day, null_unit AS row_count, NULL AS unit_count
  FROM nulls_1
  UNION ALL
  SELECT 'ignored_outcome_rows' AS kind, 'logins:null_time' AS reason, NULL AS variant, NULL AS day, null_time AS row_count, NULL AS unit_count
  FROM nulls_1
  UNION ALL
  SELECT 'ignored_outcome_rows' AS kind, 'tickets:null_unit' AS reason, NULL AS variant, NULL AS day, null_unit AS row_count, NULL AS unit_count
  FROM nulls_2
  UNION ALL
  SELECT 'ignored_outcome_rows' AS kind, 'tickets:null_time' AS reason, NULL AS variant, NULL AS day, null_time AS row_count, NULL AS unit_count
  FROM nulls_2
) AS h
ORDER BY h.kind, h.reason, h.variant, h.day
;

DROP TABLE IF EXISTS temp.main."assay_cohort"
;
