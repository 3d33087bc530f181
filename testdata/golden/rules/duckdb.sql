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
    coalesce(x."screen" = 'billing' AND x."platform" <> 'test', FALSE) AS qualifies,
    x."platform" AS "seg_platform"
  FROM read_csv('flags.csv') AS x
  WHERE x."account" IS NOT NULL AND x."seen_at" IS NOT NULL
    AND epoch_us(x."seen_at") >= 1769904000000000 AND epoch_us(x."seen_at") < 1772323200000000
    AND x."seen_at" >= TIMESTAMP '2026-01-30 00:00:00' AND x."seen_at" < TIMESTAMP '2026-03-03 00:00:00'
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
-- Trigger: each unit's first qualifying exposure (a row qualifies when: screen = 'billing' AND platform <> 'test').
-- Segment values come from the unit's first qualifying row at the trigger time, ordered by
-- CASE WHEN variant IS NULL THEN 1 ELSE 0 END, variant, "seg_platform".
triggers AS (
  SELECT q.unit_id, CASE WHEN q.is_crossover THEN coalesce(q.row_variant, q.variant_lo) ELSE q.variant_lo END AS variant,
    q.trigger_us, q.is_crossover, q."seg_platform"
  FROM (
    SELECT u.unit_id, u.variant_lo, r.variant AS row_variant, u.trigger_us, coalesce(u.variant_lo <> u.variant_hi, FALSE) AS is_crossover, r."seg_platform",
      row_number() OVER (PARTITION BY u.unit_id ORDER BY CASE WHEN r.variant IS NULL THEN 1 ELSE 0 END, r.variant, r."seg_platform") AS rn
    FROM exposed_units AS u
    JOIN exposure_rows AS r ON r.unit_id = u.unit_id AND r.ts_us = u.trigger_us AND r.qualifies
  ) AS q
  WHERE q.rn = 1
),
-- Attributes from accounts (declared static: values do not change over time).
"attr_accounts" AS (
  SELECT v.unit_id, v."seg_tier"
  FROM (
    SELECT t.unit_id, a."tier" AS "seg_tier", row_number() OVER (PARTITION BY t.unit_id ORDER BY a."account", a."country", a."tier") AS rn
    FROM triggers AS t
    JOIN read_parquet('accounts.parquet') AS a ON a."account" = t.unit_id
  ) AS v
  WHERE v.rn = 1
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
    t."seg_platform" AS "seg_platform",
    a1."seg_tier" AS "seg_tier",
    t.is_crossover,
    (t.variant IS NULL OR t.variant NOT IN ('control', 'reminder')) AS is_unknown_variant,
    (r1.unit_id IS NULL) AS "fails_active",
    (r2.unit_id IS NOT NULL) AS "fails_no_open_ticket",
    (r3.unit_id IS NULL) AS "fails_not_internal",
    (r4.unit_id IS NULL) AS "fails_paying"
  FROM triggers AS t
  LEFT JOIN "attr_accounts" AS a1 ON a1.unit_id = t.unit_id
  LEFT JOIN rule_1 AS r1 ON r1.unit_id = t.unit_id
  LEFT JOIN rule_2 AS r2 ON r2.unit_id = t.unit_id
  LEFT JOIN rule_3 AS r3 ON r3.unit_id = t.unit_id
  LEFT JOIN rule_4 AS r4 ON r4.unit_id = t.unit_id
),
-- Exposed units without a qualifying exposure, kept with no trigger for the health counts.
never_triggered AS (
  SELECT u.unit_id FROM exposed_units AS u WHERE u.trigger_us IS NULL
)
SELECT unit_id, variant, trigger_us, trigger_day, "seg_platform", "seg_tier", "is_crossover", "is_unknown_variant", "fails_active", "fails_no_open_ticket", "fails_not_internal", "fails_paying"
FROM cohort
UNION ALL
SELECT n.unit_id, NULL AS variant, NULL AS trigger_us, NULL AS trigger_day, NULL AS "seg_platform", NULL AS "seg_tier", NULL AS "is_crossover", NULL AS "is_unknown_variant", NULL AS "fails_active", NULL AS "fails_no_open_ticket", NULL AS "fails_not_internal", NULL AS "fails_paying"
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
  SELECT unit_id, variant, trigger_us, trigger_day, "seg_platform", "seg_tier", "is_crossover", "is_unknown_variant", "fails_active", "fails_no_open_ticket", "fails_not_internal", "fails_paying"
  FROM temp.main."assay_cohort"
  WHERE trigger_us IS NOT NULL
),
-- Eligible units: one variant only, a declared variant, and every eligibility rule met at the trigger.
eligible AS (
  SELECT c.unit_id, c.variant, c.trigger_us, c.trigger_day, c."seg_platform", c."seg_tier"
  FROM cohort AS c
  WHERE NOT c."is_crossover"
    AND NOT c."is_unknown_variant"
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
    e."seg_platform",
    e."seg_tier",
    (e.trigger_us + 2592000000000 <= 1772323200000000) AS mature_30d,
    coalesce(p1."m_logins_30d", 0) AS "m_logins_30d",
    coalesce(p2."m_tickets_30d", 0) AS "m_tickets_30d"
  FROM eligible AS e
  LEFT JOIN "pass_logins" AS p1 ON p1.unit_id = e.unit_id
  LEFT JOIN "pass_tickets" AS p2 ON p2.unit_id = e.unit_id
),
-- Segment platform: the 10 values with the most eligible units; the rest are grouped as '(other)'.
"top_platform" AS (
  SELECT g.value, row_number() OVER (ORDER BY g.units DESC, g.value) AS value_rank
  FROM (
    SELECT CAST(u."seg_platform" AS VARCHAR) AS value, count(*) AS units
    FROM unit_values AS u
    WHERE u."seg_platform" IS NOT NULL
    GROUP BY CAST(u."seg_platform" AS VARCHAR)
  ) AS g
),
-- Segment tier: the 10 values with the most eligible units; the rest are grouped as '(other)'.
"top_tier" AS (
  SELECT g.value, row_number() OVER (ORDER BY g.units DESC, g.value) AS value_rank
  FROM (
    SELECT CAST(u."seg_tier" AS VARCHAR) AS value, count(*) AS units
    FROM unit_values AS u
    WHERE u."seg_tier" IS NOT NULL
    GROUP BY CAST(u."seg_tier" AS VARCHAR)
  ) AS g
),
-- Each unit's segment keys: one of the top values, '(other)' for the rest, '(null)' when missing.
keyed_units AS (
  SELECT
    u.*,
    CASE WHEN u."seg_platform" IS NULL THEN '(null)' WHEN k1.value_rank <= 10 THEN k1.value ELSE '(other)' END AS "key_seg_platform",
    CASE WHEN u."seg_tier" IS NULL THEN '(null)' WHEN k2.value_rank <= 10 THEN k2.value ELSE '(other)' END AS "key_seg_tier"
  FROM unit_values AS u
  LEFT JOIN "top_platform" AS k1 ON k1.value = CAST(u."seg_platform" AS VARCHAR)
  LEFT JOIN "top_tier" AS k2 ON k2.value = CAST(u."seg_tier" AS VARCHAR)
),
-- Centres: each variant's means, subtracted before the variance and covariance aggregates so
-- their partial sums stay small (numerically stable whatever the engine's merge order).
centres AS (
  SELECT
    u.variant,
    avg(CASE WHEN u.mature_30d THEN CAST(u."m_logins_30d" AS DOUBLE) END) AS "c_logins_30d",
    avg(CASE WHEN u.mature_30d THEN CAST(u."m_tickets_30d" AS DOUBLE) END) AS "c_tickets_30d"
  FROM unit_values AS u
  GROUP BY u.variant
)
-- The overall rows and one set of rows per breakdown, from one pass over the units: in each
-- grouping the keys it does not use are NULL.
SELECT
  '063af84941e2ba0d' AS "spec_fingerprint",
  'as_of=2026-03-01T00:00:00Z;by=platform,tier' AS "compile_options",
  u.variant AS "variant",
  u."key_seg_platform" AS "seg_platform",
  u."key_seg_tier" AS "seg_tier",
  count(*) AS "units",
  -- logins_30d (primary, mean): mean per unit of count of rows; window [trigger + 0d, trigger + 30d), mature units only
  count(CASE WHEN u.mature_30d THEN 1 END) AS "logins_30d__n",
  CASE WHEN min(CASE WHEN u.mature_30d THEN CAST(u."m_logins_30d" AS DOUBLE) END) = max(CASE WHEN u.mature_30d THEN CAST(u."m_logins_30d" AS DOUBLE) END) THEN min(CASE WHEN u.mature_30d THEN CAST(u."m_logins_30d" AS DOUBLE) END) ELSE min(c0."c_logins_30d") + avg((CASE WHEN u.mature_30d THEN CAST(u."m_logins_30d" AS DOUBLE) END - c0."c_logins_30d")) END AS "logins_30d__mean",
  var_samp((CASE WHEN u.mature_30d THEN CAST(u."m_logins_30d" AS DOUBLE) END - c0."c_logins_30d")) AS "logins_30d__var",
  -- tickets_30d (guard, mean): mean per unit of count of rows; window [trigger + 0d, trigger + 30d), mature units only
  count(CASE WHEN u.mature_30d THEN 1 END) AS "tickets_30d__n",
  CASE WHEN min(CASE WHEN u.mature_30d THEN CAST(u."m_tickets_30d" AS DOUBLE) END) = max(CASE WHEN u.mature_30d THEN CAST(u."m_tickets_30d" AS DOUBLE) END) THEN min(CASE WHEN u.mature_30d THEN CAST(u."m_tickets_30d" AS DOUBLE) END) ELSE min(c0."c_tickets_30d") + avg((CASE WHEN u.mature_30d THEN CAST(u."m_tickets_30d" AS DOUBLE) END - c0."c_tickets_30d")) END AS "tickets_30d__mean",
  var_samp((CASE WHEN u.mature_30d THEN CAST(u."m_tickets_30d" AS DOUBLE) END - c0."c_tickets_30d")) AS "tickets_30d__var"
FROM keyed_units AS u
JOIN centres AS c0 ON c0.variant = u.variant
GROUP BY GROUPING SETS ((u.variant), (u.variant, u."key_seg_platform"), (u.variant, u."key_seg_tier"))
ORDER BY "variant", "seg_platform", "seg_tier"
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
    coalesce(x."screen" = 'billing' AND x."platform" <> 'test', FALSE) AS qualifies,
    x."platform" AS "seg_platform"
  FROM read_csv('flags.csv') AS x
  WHERE x."account" IS NOT NULL AND x."seen_at" IS NOT NULL
    AND epoch_us(x."seen_at") >= 1769904000000000 AND epoch_us(x."seen_at") < 1772323200000000
    AND x."seen_at" >= TIMESTAMP '2026-01-30 00:00:00' AND x."seen_at" < TIMESTAMP '2026-03-03 00:00:00'
),
-- Every triggered unit with the reasons it may be excluded, from the cohort table.
cohort AS (
  SELECT unit_id, variant, trigger_us, trigger_day, "seg_platform", "seg_tier", "is_crossover", "is_unknown_variant", "fails_active", "fails_no_open_ticket", "fails_not_internal", "fails_paying"
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
-- Rows of logins that no metric or rule can use: no unit or no time.
nulls_1 AS (
  SELECT count(*) - count(s."account") AS null_unit, count(*) - count(s."at") AS null_time
  FROM read_parquet('logins.parquet') AS s
),
-- Rows of tickets that no metric or rule can use: no unit or no time.
nulls_2 AS (
  SELECT count(*) - count(s."account") AS null_unit, count(*) - count(s."opened_at") AS null_time
  FROM read_parquet('tickets.parquet') AS s
),
-- Eligible units: one variant only, a declared variant, and every eligibility rule met at the trigger.
eligible AS (
  SELECT c.unit_id, c.variant, c.trigger_us, c.trigger_day, c."seg_platform", c."seg_tier"
  FROM cohort AS c
  WHERE NOT c."is_crossover"
    AND NOT c."is_unknown_variant"
    AND NOT c."fails_active"
    AND NOT c."fails_no_open_ticket"
    AND NOT c."fails_not_internal"
    AND NOT c."fails_paying"
),
-- Each unit's latest row of logins in the analysis period before the as-of time.
last_1 AS (
  SELECT s."account" AS unit_id, max(epoch_us(s."at")) AS last_us
  FROM read_parquet('logins.parquet') AS s
  WHERE s."account" IS NOT NULL AND epoch_us(s."at") >= 1769904000000000 AND epoch_us(s."at") < 1772323200000000
    AND s."at" >= TIMESTAMP '2026-01-30 00:00:00' AND s."at" < TIMESTAMP '2026-03-03 00:00:00'
  GROUP BY s."account"
),
-- Each unit's latest row of tickets in the analysis period before the as-of time.
last_2 AS (
  SELECT s."account" AS unit_id, max(epoch_us(s."opened_at")) AS last_us
  FROM read_parquet('tickets.parquet') AS s
  WHERE s."account" IS NOT NULL AND epoch_us(s."opened_at") >= 1769904000000000 AND epoch_us(s."opened_at") < 1772323200000000
    AND s."opened_at" >= TIMESTAMP '2026-01-30 00:00:00' AND s."opened_at" < TIMESTAMP '2026-03-03 00:00:00'
  GROUP BY s."account"
),
-- Per variant: eligible units, and those with no row from their trigger up to the as-of time in any
-- outcome source (and in each).
no_outcomes AS (
  SELECT
    e.variant,
    count(*) AS eligible_units,
    count(CASE WHEN (o1.last_us IS NULL OR o1.last_us < e.trigger_us) AND (o2.last_us IS NULL OR o2.last_us < e.trigger_us) THEN 1 END) AS none_any,
    count(CASE WHEN (o1.last_us IS NULL OR o1.last_us < e.trigger_us) THEN 1 END) AS none_1,
    count(CASE WHEN (o2.last_us IS NULL OR o2.last_us < e.trigger_us) THEN 1 END) AS none_2
  FROM eligible AS e
  LEFT JOIN last_1 AS o1 ON o1.unit_id = e.unit_id
  LEFT JOIN last_2 AS o2 ON o2.unit_id = e.unit_id
  GROUP BY e.variant
)
SELECT h.kind, h.reason, h.source, h.variant, h.day, h.row_count, h.unit_count FROM (
  SELECT 'exposures' AS kind, NULL AS reason, NULL AS source, variant AS variant, CAST(make_timestamp(ts_us) AS DATE) AS day, count(*) AS row_count, count(DISTINCT unit_id) AS unit_count
  FROM exposure_rows
  GROUP BY variant, CAST(make_timestamp(ts_us) AS DATE)
  UNION ALL
  SELECT 'triggers' AS kind, NULL AS reason, NULL AS source, variant AS variant, trigger_day AS day, count(*) AS row_count, count(*) AS unit_count
  FROM cohort
  GROUP BY variant, trigger_day
  UNION ALL
  SELECT 'never_triggered' AS kind, NULL AS reason, NULL AS source, NULL AS variant, NULL AS day, count(*) AS row_count, count(*) AS unit_count
  FROM temp.main."assay_cohort" AS u
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
  SELECT 'excluded' AS kind, 'rule:active' AS reason, NULL AS source, variant AS variant, NULL AS day, count(*) AS row_count, count(*) AS unit_count
  FROM cohort
  WHERE "fails_active"
  GROUP BY variant
  UNION ALL
  SELECT 'excluded' AS kind, 'rule:no_open_ticket' AS reason, NULL AS source, variant AS variant, NULL AS day, count(*) AS row_count, count(*) AS unit_count
  FROM cohort
  WHERE "fails_no_open_ticket"
  GROUP BY variant
  UNION ALL
  SELECT 'excluded' AS kind, 'rule:not_internal' AS reason, NULL AS source, variant AS variant, NULL AS day, count(*) AS row_count, count(*) AS unit_count
  FROM cohort
  WHERE "fails_not_internal"
  GROUP BY variant
  UNION ALL
  SELECT 'excluded' AS kind, 'rule:paying' AS reason, NULL AS source, variant AS variant, NULL AS day, count(*) AS row_count, count(*) AS unit_count
  FROM cohort
  WHERE "fails_paying"
  GROUP BY variant
  UNION ALL
  SELECT 'excluded' AS kind, 'any' AS reason, NULL AS source, variant AS variant, NULL AS day, count(*) AS row_count, count(*) AS unit_count
  FROM cohort
  WHERE "is_crossover" OR "is_unknown_variant" OR "fails_active" OR "fails_no_open_ticket" OR "fails_not_internal" OR "fails_paying"
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
  SELECT 'ignored_outcome_rows' AS kind, 'null_unit' AS reason, 'logins' AS source, NULL AS variant, NULL AS day, null_unit AS row_count, NULL AS unit_count
  FROM nulls_1
  UNION ALL
  SELECT 'ignored_outcome_rows' AS kind, 'null_time' AS reason, 'logins' AS source, NULL AS variant, NULL AS day, null_time AS row_count, NULL AS unit_count
  FROM nulls_1
  UNION ALL
  SELECT 'ignored_outcome_rows' AS kind, 'null_unit' AS reason, 'tickets' AS source, NULL AS variant, NULL AS day, null_unit AS row_count, NULL AS unit_count
  FROM nulls_2
  UNION ALL
  SELECT 'ignored_outcome_rows' AS kind, 'null_time' AS reason, 'tickets' AS source, NULL AS variant, NULL AS day, null_time AS row_count, NULL AS unit_count
  FROM nulls_2
  UNION ALL
  SELECT 'unknown_variant' AS kind, NULL AS reason, NULL AS source, variant AS variant, NULL AS day, units AS row_count, units AS unit_count
  FROM unknown_values
  UNION ALL
  SELECT 'no_outcome_rows' AS kind, NULL AS reason, NULL AS source, variant AS variant, NULL AS day, eligible_units AS row_count, none_any AS unit_count
  FROM no_outcomes
  UNION ALL
  SELECT 'no_outcome_rows' AS kind, NULL AS reason, 'logins' AS source, variant AS variant, NULL AS day, eligible_units AS row_count, none_1 AS unit_count
  FROM no_outcomes
  UNION ALL
  SELECT 'no_outcome_rows' AS kind, NULL AS reason, 'tickets' AS source, variant AS variant, NULL AS day, eligible_units AS row_count, none_2 AS unit_count
  FROM no_outcomes
) AS h
ORDER BY h.kind, h.reason, h.source, h.variant, h.day
;

DROP TABLE IF EXISTS temp.main."assay_cohort"
;
