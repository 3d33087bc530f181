-- assay 0.1.0 cohort table query for experiment reorder-shelf-2026-03 (spec fingerprint 1d68f22f07de8837)
-- Times are compared as integer microseconds since 1970-01-01 UTC; timestamps without a zone are read as UTC.
-- Exposures are read in [2026-03-02T00:00:00Z, 2026-04-13T00:00:00Z); outcome windows must have ended by 2026-04-13T00:00:00Z.
-- File paths are relative to the spec's directory.
-- Computed once per run; the per-variant and health queries read it.
CREATE OR REPLACE TEMPORARY TABLE "assay_cohort" AS
WITH
-- Exposure rows of exposures inside the analysis window; rows without a unit or time are ignored.
exposure_rows AS NOT MATERIALIZED (
  SELECT
    x."customer_id" AS unit_id,
    CAST(x."variant" AS VARCHAR) AS variant,
    epoch_us(x."exposed_at") AS ts_us,
    coalesce(x."surface" = 'home', FALSE) AS qualifies,
    x."platform" AS "seg_platform"
  FROM read_parquet('data/exposures.parquet') AS x
  WHERE x."customer_id" IS NOT NULL AND x."exposed_at" IS NOT NULL
    AND epoch_us(x."exposed_at") >= 1772409600000000 AND epoch_us(x."exposed_at") < 1776038400000000
    AND x."exposed_at" >= TIMESTAMP '2026-02-28 00:00:00' AND x."exposed_at" < TIMESTAMP '2026-04-15 00:00:00'
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
-- Trigger: each unit's first qualifying exposure (a row qualifies when: surface = 'home').
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
-- Attributes from customers (declared static: values do not change over time).
"attr_customers" AS (
  SELECT v.unit_id, v."seg_tenure"
  FROM (
    SELECT t.unit_id, a."tenure_band" AS "seg_tenure", row_number() OVER (PARTITION BY t.unit_id ORDER BY a."customer_id", a."region", a."signup_at", a."tenure_band") AS rn
    FROM triggers AS t
    JOIN read_parquet('data/customers.parquet') AS a ON a."customer_id" = t.unit_id
  ) AS v
  WHERE v.rn = 1
),
-- Rule recent_order: eligible when the unit has row in orders in [trigger - 60d, trigger + 0d) where status <> 'cancelled'.
rule_1 AS (
  SELECT DISTINCT t.unit_id
  FROM triggers AS t
  JOIN read_parquet('data/orders.parquet') AS s ON s."customer_id" = t.unit_id
  WHERE epoch_us(s."ordered_at") >= t.trigger_us - 5184000000000
    AND epoch_us(s."ordered_at") < t.trigger_us + 0
    AND s."ordered_at" >= TIMESTAMP '2025-12-30 00:00:00' AND s."ordered_at" < TIMESTAMP '2026-04-15 00:00:00'
    AND coalesce(s."status" <> 'cancelled', FALSE)
),
-- Units exposed in a prior run before the analysis start: excluded as previously_exposed.
prior_units AS (
  -- Prior run dry_run: exposures in [2026-02-26T00:00:00Z, 2026-03-02T00:00:00Z) where surface = 'home'.
  SELECT x."customer_id" AS unit_id
  FROM read_parquet('data/exposures.parquet') AS x
  WHERE x."customer_id" IS NOT NULL
    AND epoch_us(x."exposed_at") >= 1772064000000000 AND epoch_us(x."exposed_at") < 1772409600000000
    AND coalesce(x."surface" = 'home', FALSE)
),
-- Every triggered unit with the reasons it may be excluded.
cohort AS (
  SELECT
    t.unit_id,
    t.variant,
    t.trigger_us,
    CAST(make_timestamp(t.trigger_us) AS DATE) AS trigger_day,
    t."seg_platform" AS "seg_platform",
    a1."seg_tenure" AS "seg_tenure",
    t.is_crossover,
    (t.variant IS NULL OR t.variant NOT IN ('control', 'shelf')) AS is_unknown_variant,
    (r1.unit_id IS NULL) AS "fails_recent_order",
    (pe.unit_id IS NOT NULL) AS "is_previously_exposed"
  FROM triggers AS t
  LEFT JOIN "attr_customers" AS a1 ON a1.unit_id = t.unit_id
  LEFT JOIN rule_1 AS r1 ON r1.unit_id = t.unit_id
  LEFT JOIN prior_units AS pe ON pe.unit_id = t.unit_id
),
-- Exposed units without a qualifying exposure, kept with no trigger for the health counts.
never_triggered AS (
  SELECT u.unit_id FROM exposed_units AS u WHERE u.trigger_us IS NULL
)
SELECT unit_id, variant, trigger_us, trigger_day, "seg_platform", "seg_tenure", "is_crossover", "is_unknown_variant", "fails_recent_order", "is_previously_exposed"
FROM cohort
UNION ALL
SELECT n.unit_id, NULL AS variant, NULL AS trigger_us, NULL AS trigger_day, NULL AS "seg_platform", NULL AS "seg_tenure", NULL AS "is_crossover", NULL AS "is_unknown_variant", NULL AS "fails_recent_order", NULL AS "is_previously_exposed"
FROM never_triggered AS n
;

-- assay 0.1.0 per-variant statistics query for experiment reorder-shelf-2026-03 (spec fingerprint 1d68f22f07de8837)
-- Times are compared as integer microseconds since 1970-01-01 UTC; timestamps without a zone are read as UTC.
-- Exposures are read in [2026-03-02T00:00:00Z, 2026-04-13T00:00:00Z); outcome windows must have ended by 2026-04-13T00:00:00Z.
-- File paths are relative to the spec's directory.
-- Reads the cohort table of the setup statement.
WITH
-- Every triggered unit with the reasons it may be excluded, from the cohort table.
cohort AS (
  SELECT unit_id, variant, trigger_us, trigger_day, "seg_platform", "seg_tenure", "is_crossover", "is_unknown_variant", "fails_recent_order", "is_previously_exposed"
  FROM temp.main."assay_cohort"
  WHERE trigger_us IS NOT NULL
),
-- Eligible units: one variant only, a declared variant, and every eligibility rule met at the trigger.
eligible AS (
  SELECT c.unit_id, c.variant, c.trigger_us, c.trigger_day, c."seg_platform", c."seg_tenure"
  FROM cohort AS c
  WHERE NOT c."is_crossover"
    AND NOT c."is_unknown_variant"
    AND NOT c."fails_recent_order"
    AND NOT c."is_previously_exposed"
),
-- One pass over orders for: m_orders_14d, m_orders_14d__x, m_orders_14d__b1, m_orders_14d__b2, m_basket_value__num, m_basket_value__den, m_basket_value__x, m_converted, m_cancelled.
"pass_orders" AS (
  SELECT
    r.unit_id,
    -- m_orders_14d: count of rows where status = 'delivered' in [trigger + 0d, trigger + 14d)
    count(CASE WHEN r.dt_us >= 0 AND r.dt_us < 1209600000000 AND (r."c_status" = 'delivered') THEN 1 END) AS "m_orders_14d",
    -- m_orders_14d__x: count of rows where status = 'delivered' in [trigger - 28d, trigger + 0d)
    count(CASE WHEN r.dt_us >= -2419200000000 AND r.dt_us < 0 AND (r."c_status" = 'delivered') THEN 1 END) AS "m_orders_14d__x",
    -- m_orders_14d__b1: count of rows where status = 'delivered' in [trigger + 0d, trigger + 7d)
    count(CASE WHEN r.dt_us >= 0 AND r.dt_us < 604800000000 AND (r."c_status" = 'delivered') THEN 1 END) AS "m_orders_14d__b1",
    -- m_orders_14d__b2: count of rows where status = 'delivered' in [trigger + 7d, trigger + 14d)
    count(CASE WHEN r.dt_us >= 604800000000 AND r.dt_us < 1209600000000 AND (r."c_status" = 'delivered') THEN 1 END) AS "m_orders_14d__b2",
    -- m_basket_value__num: sum of amount where status = 'delivered' in [trigger + 0d, trigger + 14d)
    CAST(sum(CASE WHEN r.dt_us >= 0 AND r.dt_us < 1209600000000 AND (r."c_status" = 'delivered') AND CAST(r."c_amount" AS DOUBLE) - CAST(r."c_amount" AS DOUBLE) = 0 THEN CAST(CAST(r."c_amount" AS DOUBLE) AS DECIMAL(38, 10)) END) AS DOUBLE) AS "m_basket_value__num",
    count(CASE WHEN r.dt_us >= 0 AND r.dt_us < 1209600000000 AND (r."c_status" = 'delivered') AND NOT (CAST(r."c_amount" AS DOUBLE) - CAST(r."c_amount" AS DOUBLE) = 0) THEN 1 END) AS "m_basket_value__num__nonfinite",
    -- m_basket_value__den: count of rows where status = 'delivered' in [trigger + 0d, trigger + 14d): the same as m_orders_14d
    -- m_basket_value__x: sum of amount where status = 'delivered' in [trigger - 28d, trigger + 0d)
    CAST(sum(CASE WHEN r.dt_us >= -2419200000000 AND r.dt_us < 0 AND (r."c_status" = 'delivered') AND CAST(r."c_amount" AS DOUBLE) - CAST(r."c_amount" AS DOUBLE) = 0 THEN CAST(CAST(r."c_amount" AS DOUBLE) AS DECIMAL(38, 10)) END) AS DOUBLE) AS "m_basket_value__x",
    -- m_converted: count of rows where status = 'delivered' in [trigger + 0d, trigger + 14d): the same as m_orders_14d
    -- m_cancelled: count of rows where status = 'cancelled' in [trigger + 0d, trigger + 14d)
    count(CASE WHEN r.dt_us >= 0 AND r.dt_us < 1209600000000 AND (r."c_status" = 'cancelled') THEN 1 END) AS "m_cancelled"
  FROM (
    SELECT e.unit_id, epoch_us(s."ordered_at") - e.trigger_us AS dt_us, s."amount" AS "c_amount", s."status" AS "c_status"
    FROM eligible AS e
    JOIN read_parquet('data/orders.parquet') AS s ON s."customer_id" = e.unit_id
    -- static range (widened by two days) so the engine can skip data early
    WHERE s."ordered_at" >= TIMESTAMP '2026-01-31 00:00:00' AND s."ordered_at" < TIMESTAMP '2026-04-29 00:00:00'
  ) AS r
  WHERE r.dt_us >= -2419200000000 AND r.dt_us < 1209600000000
  GROUP BY r.unit_id
),
-- One pass over taps for: m_shelf_taps, m_shelf_taps__b1, m_shelf_taps__b2, m_shelf_taps__b3, m_shelf_taps__b4, m_shelf_taps__b5, m_shelf_taps__b6, m_shelf_taps__b7.
"pass_taps" AS (
  SELECT
    r.unit_id,
    -- m_shelf_taps: count of rows in [trigger + 0d, trigger + 14d)
    count(CASE WHEN r.dt_us >= 0 AND r.dt_us < 1209600000000 THEN 1 END) AS "m_shelf_taps",
    -- m_shelf_taps__b1: count of rows in [trigger + 0d, trigger + 2d)
    count(CASE WHEN r.dt_us >= 0 AND r.dt_us < 172800000000 THEN 1 END) AS "m_shelf_taps__b1",
    -- m_shelf_taps__b2: count of rows in [trigger + 2d, trigger + 4d)
    count(CASE WHEN r.dt_us >= 172800000000 AND r.dt_us < 345600000000 THEN 1 END) AS "m_shelf_taps__b2",
    -- m_shelf_taps__b3: count of rows in [trigger + 4d, trigger + 6d)
    count(CASE WHEN r.dt_us >= 345600000000 AND r.dt_us < 518400000000 THEN 1 END) AS "m_shelf_taps__b3",
    -- m_shelf_taps__b4: count of rows in [trigger + 6d, trigger + 8d)
    count(CASE WHEN r.dt_us >= 518400000000 AND r.dt_us < 691200000000 THEN 1 END) AS "m_shelf_taps__b4",
    -- m_shelf_taps__b5: count of rows in [trigger + 8d, trigger + 10d)
    count(CASE WHEN r.dt_us >= 691200000000 AND r.dt_us < 864000000000 THEN 1 END) AS "m_shelf_taps__b5",
    -- m_shelf_taps__b6: count of rows in [trigger + 10d, trigger + 12d)
    count(CASE WHEN r.dt_us >= 864000000000 AND r.dt_us < 1036800000000 THEN 1 END) AS "m_shelf_taps__b6",
    -- m_shelf_taps__b7: count of rows in [trigger + 12d, trigger + 14d)
    count(CASE WHEN r.dt_us >= 1036800000000 AND r.dt_us < 1209600000000 THEN 1 END) AS "m_shelf_taps__b7"
  FROM (
    SELECT e.unit_id, epoch_us(s."tapped_at") - e.trigger_us AS dt_us
    FROM eligible AS e
    JOIN read_parquet('data/taps.parquet') AS s ON s."customer_id" = e.unit_id
    -- static range (widened by two days) so the engine can skip data early
    WHERE s."tapped_at" >= TIMESTAMP '2026-02-28 00:00:00' AND s."tapped_at" < TIMESTAMP '2026-04-29 00:00:00'
  ) AS r
  WHERE r.dt_us >= 0 AND r.dt_us < 1209600000000
  GROUP BY r.unit_id
),
-- One pass over support for: m_support_contacts.
"pass_support" AS (
  SELECT
    r.unit_id,
    -- m_support_contacts: count of rows in [trigger + 0d, trigger + 14d)
    count(CASE WHEN r.dt_us >= 0 AND r.dt_us < 1209600000000 THEN 1 END) AS "m_support_contacts"
  FROM (
    SELECT e.unit_id, epoch_us(s."contacted_at") - e.trigger_us AS dt_us
    FROM eligible AS e
    JOIN read_parquet('data/support.parquet') AS s ON s."customer_id" = e.unit_id
    -- static range (widened by two days) so the engine can skip data early
    WHERE s."contacted_at" >= TIMESTAMP '2026-02-28 00:00:00' AND s."contacted_at" < TIMESTAMP '2026-04-29 00:00:00'
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
    e."seg_platform",
    e."seg_tenure",
    (e.trigger_us + 1209600000000 <= 1776038400000000) AS mature_14d,
    coalesce(p1."m_orders_14d", 0) AS "m_orders_14d",
    coalesce(p1."m_orders_14d__x", 0) AS "m_orders_14d__x",
    coalesce(p1."m_orders_14d__b1", 0) AS "m_orders_14d__b1",
    coalesce(p1."m_orders_14d__b2", 0) AS "m_orders_14d__b2",
    coalesce(p1."m_basket_value__num", 0) AS "m_basket_value__num",
    coalesce(p1."m_basket_value__num__nonfinite", 0) AS "m_basket_value__num__nonfinite",
    coalesce(p1."m_orders_14d", 0) AS "m_basket_value__den",
    coalesce(p1."m_basket_value__x", 0) AS "m_basket_value__x",
    coalesce(p1."m_orders_14d", 0) AS "m_converted",
    coalesce(p1."m_cancelled", 0) AS "m_cancelled",
    coalesce(p2."m_shelf_taps", 0) AS "m_shelf_taps",
    coalesce(p2."m_shelf_taps__b1", 0) AS "m_shelf_taps__b1",
    coalesce(p2."m_shelf_taps__b2", 0) AS "m_shelf_taps__b2",
    coalesce(p2."m_shelf_taps__b3", 0) AS "m_shelf_taps__b3",
    coalesce(p2."m_shelf_taps__b4", 0) AS "m_shelf_taps__b4",
    coalesce(p2."m_shelf_taps__b5", 0) AS "m_shelf_taps__b5",
    coalesce(p2."m_shelf_taps__b6", 0) AS "m_shelf_taps__b6",
    coalesce(p2."m_shelf_taps__b7", 0) AS "m_shelf_taps__b7",
    coalesce(p3."m_support_contacts", 0) AS "m_support_contacts"
  FROM eligible AS e
  LEFT JOIN "pass_orders" AS p1 ON p1.unit_id = e.unit_id
  LEFT JOIN "pass_taps" AS p2 ON p2.unit_id = e.unit_id
  LEFT JOIN "pass_support" AS p3 ON p3.unit_id = e.unit_id
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
-- Segment tenure: the 10 values with the most eligible units; the rest are grouped as '(other)'.
"top_tenure" AS (
  SELECT g.value, row_number() OVER (ORDER BY g.units DESC, g.value) AS value_rank
  FROM (
    SELECT CAST(u."seg_tenure" AS VARCHAR) AS value, count(*) AS units
    FROM unit_values AS u
    WHERE u."seg_tenure" IS NOT NULL
    GROUP BY CAST(u."seg_tenure" AS VARCHAR)
  ) AS g
),
-- Each unit's segment keys: one of the top values, '(other)' for the rest, '(null)' when missing.
keyed_units AS (
  SELECT
    u.*,
    CASE WHEN u."seg_platform" IS NULL THEN '(null)' WHEN k1.value_rank <= 10 THEN k1.value ELSE '(other)' END AS "key_seg_platform",
    CASE WHEN u."seg_tenure" IS NULL THEN '(null)' WHEN k2.value_rank <= 10 THEN k2.value ELSE '(other)' END AS "key_seg_tenure"
  FROM unit_values AS u
  LEFT JOIN "top_platform" AS k1 ON k1.value = CAST(u."seg_platform" AS VARCHAR)
  LEFT JOIN "top_tenure" AS k2 ON k2.value = CAST(u."seg_tenure" AS VARCHAR)
),
-- Centres: each variant's means, subtracted before the variance and covariance aggregates so
-- their partial sums stay small (numerically stable whatever the engine's merge order).
centres AS (
  SELECT
    u.variant,
    avg(CASE WHEN u.mature_14d THEN CAST(u."m_orders_14d" AS DOUBLE) END) AS "c_orders_14d",
    avg(CASE WHEN u.mature_14d THEN CAST(u."m_orders_14d__x" AS DOUBLE) END) AS "c_orders_14d__x",
    avg(CASE WHEN u.mature_14d THEN CAST(u."m_orders_14d__b1" AS DOUBLE) END) AS "c_orders_14d__b1",
    avg(CASE WHEN u.mature_14d THEN CAST(u."m_orders_14d__b2" AS DOUBLE) END) AS "c_orders_14d__b2",
    avg(CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps" AS DOUBLE) END) AS "c_shelf_taps",
    avg(CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b1" AS DOUBLE) END) AS "c_shelf_taps__b1",
    avg(CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b2" AS DOUBLE) END) AS "c_shelf_taps__b2",
    avg(CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b3" AS DOUBLE) END) AS "c_shelf_taps__b3",
    avg(CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b4" AS DOUBLE) END) AS "c_shelf_taps__b4",
    avg(CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b5" AS DOUBLE) END) AS "c_shelf_taps__b5",
    avg(CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b6" AS DOUBLE) END) AS "c_shelf_taps__b6",
    avg(CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b7" AS DOUBLE) END) AS "c_shelf_taps__b7",
    avg(CASE WHEN u.mature_14d THEN CAST(u."m_basket_value__num" AS DOUBLE) END) AS "c_basket_value__num",
    avg(CASE WHEN u.mature_14d THEN CAST(u."m_basket_value__den" AS DOUBLE) END) AS "c_basket_value__den",
    avg(CASE WHEN u.mature_14d THEN CAST(u."m_basket_value__x" AS DOUBLE) END) AS "c_basket_value__x",
    avg(CASE WHEN u.mature_14d THEN CAST(u."m_cancelled" AS DOUBLE) END) AS "c_cancelled",
    avg(CASE WHEN u.mature_14d THEN CAST(u."m_support_contacts" AS DOUBLE) END) AS "c_support_contacts"
  FROM unit_values AS u
  GROUP BY u.variant
)
-- The overall rows and one set of rows per breakdown, from one pass over the units: in each
-- grouping the keys it does not use are NULL.
SELECT
  '1d68f22f07de8837' AS "spec_fingerprint",
  'as_of=2026-04-13T00:00:00Z;by=platform,tenure,rollout_step' AS "compile_options",
  u.variant AS "variant",
  u."key_seg_platform" AS "seg_platform",
  u."key_seg_tenure" AS "seg_tenure",
  CASE WHEN u.trigger_us >= 1773014400000000 THEN 'full' WHEN u.trigger_us >= 1772668800000000 THEN 'ramp' ELSE 'test' END AS "rollout_step",
  count(*) AS "units",
  -- orders_14d (primary, mean): mean per unit of count of rows where status = 'delivered'; window [trigger + 0d, trigger + 14d), mature units only; shared definition delivered_orders from grocery.toml (definition a3ead006)
  count(CASE WHEN u.mature_14d THEN 1 END) AS "orders_14d__n",
  CASE WHEN min(CASE WHEN u.mature_14d THEN CAST(u."m_orders_14d" AS DOUBLE) END) = max(CASE WHEN u.mature_14d THEN CAST(u."m_orders_14d" AS DOUBLE) END) THEN min(CASE WHEN u.mature_14d THEN CAST(u."m_orders_14d" AS DOUBLE) END) ELSE min(c0."c_orders_14d") + avg((CASE WHEN u.mature_14d THEN CAST(u."m_orders_14d" AS DOUBLE) END - c0."c_orders_14d")) END AS "orders_14d__mean",
  var_samp((CASE WHEN u.mature_14d THEN CAST(u."m_orders_14d" AS DOUBLE) END - c0."c_orders_14d")) AS "orders_14d__var",
  -- orders_14d covariate: count of rows where status = 'delivered' (definition of orders_14d) in [trigger - 28d, trigger + 0d), before the trigger
  CASE WHEN min(CASE WHEN u.mature_14d THEN CAST(u."m_orders_14d__x" AS DOUBLE) END) = max(CASE WHEN u.mature_14d THEN CAST(u."m_orders_14d__x" AS DOUBLE) END) THEN min(CASE WHEN u.mature_14d THEN CAST(u."m_orders_14d__x" AS DOUBLE) END) ELSE min(c0."c_orders_14d__x") + avg((CASE WHEN u.mature_14d THEN CAST(u."m_orders_14d__x" AS DOUBLE) END - c0."c_orders_14d__x")) END AS "orders_14d__x_mean",
  var_samp((CASE WHEN u.mature_14d THEN CAST(u."m_orders_14d__x" AS DOUBLE) END - c0."c_orders_14d__x")) AS "orders_14d__x_var",
  covar_samp((CASE WHEN u.mature_14d THEN CAST(u."m_orders_14d" AS DOUBLE) END - c0."c_orders_14d"), (CASE WHEN u.mature_14d THEN CAST(u."m_orders_14d__x" AS DOUBLE) END - c0."c_orders_14d__x")) AS "orders_14d__yx_cov",
  -- orders_14d by time since trigger: 2 buckets of 7d, each in [trigger + 0d, trigger + 7d) …
  CASE WHEN min(CASE WHEN u.mature_14d THEN CAST(u."m_orders_14d__b1" AS DOUBLE) END) = max(CASE WHEN u.mature_14d THEN CAST(u."m_orders_14d__b1" AS DOUBLE) END) THEN min(CASE WHEN u.mature_14d THEN CAST(u."m_orders_14d__b1" AS DOUBLE) END) ELSE min(c0."c_orders_14d__b1") + avg((CASE WHEN u.mature_14d THEN CAST(u."m_orders_14d__b1" AS DOUBLE) END - c0."c_orders_14d__b1")) END AS "orders_14d__b1_mean",
  var_samp((CASE WHEN u.mature_14d THEN CAST(u."m_orders_14d__b1" AS DOUBLE) END - c0."c_orders_14d__b1")) AS "orders_14d__b1_var",
  CASE WHEN min(CASE WHEN u.mature_14d THEN CAST(u."m_orders_14d__b2" AS DOUBLE) END) = max(CASE WHEN u.mature_14d THEN CAST(u."m_orders_14d__b2" AS DOUBLE) END) THEN min(CASE WHEN u.mature_14d THEN CAST(u."m_orders_14d__b2" AS DOUBLE) END) ELSE min(c0."c_orders_14d__b2") + avg((CASE WHEN u.mature_14d THEN CAST(u."m_orders_14d__b2" AS DOUBLE) END - c0."c_orders_14d__b2")) END AS "orders_14d__b2_mean",
  var_samp((CASE WHEN u.mature_14d THEN CAST(u."m_orders_14d__b2" AS DOUBLE) END - c0."c_orders_14d__b2")) AS "orders_14d__b2_var",
  -- orders_14d by time since trigger: trend contrast L = -1·b1 +1·b2
  var_samp(-1 * (CASE WHEN u.mature_14d THEN CAST(u."m_orders_14d__b1" AS DOUBLE) END - c0."c_orders_14d__b1") + 1 * (CASE WHEN u.mature_14d THEN CAST(u."m_orders_14d__b2" AS DOUBLE) END - c0."c_orders_14d__b2")) AS "orders_14d__trend_var",
  -- shelf_taps (mechanism, mean): mean per unit of count of rows; window [trigger + 0d, trigger + 14d), mature units only
  count(CASE WHEN u.mature_14d THEN 1 END) AS "shelf_taps__n",
  CASE WHEN min(CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps" AS DOUBLE) END) = max(CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps" AS DOUBLE) END) THEN min(CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps" AS DOUBLE) END) ELSE min(c0."c_shelf_taps") + avg((CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps" AS DOUBLE) END - c0."c_shelf_taps")) END AS "shelf_taps__mean",
  var_samp((CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps" AS DOUBLE) END - c0."c_shelf_taps")) AS "shelf_taps__var",
  -- shelf_taps by time since trigger: 7 buckets of 2d, each in [trigger + 0d, trigger + 2d) …
  CASE WHEN min(CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b1" AS DOUBLE) END) = max(CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b1" AS DOUBLE) END) THEN min(CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b1" AS DOUBLE) END) ELSE min(c0."c_shelf_taps__b1") + avg((CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b1" AS DOUBLE) END - c0."c_shelf_taps__b1")) END AS "shelf_taps__b1_mean",
  var_samp((CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b1" AS DOUBLE) END - c0."c_shelf_taps__b1")) AS "shelf_taps__b1_var",
  CASE WHEN min(CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b2" AS DOUBLE) END) = max(CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b2" AS DOUBLE) END) THEN min(CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b2" AS DOUBLE) END) ELSE min(c0."c_shelf_taps__b2") + avg((CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b2" AS DOUBLE) END - c0."c_shelf_taps__b2")) END AS "shelf_taps__b2_mean",
  var_samp((CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b2" AS DOUBLE) END - c0."c_shelf_taps__b2")) AS "shelf_taps__b2_var",
  CASE WHEN min(CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b3" AS DOUBLE) END) = max(CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b3" AS DOUBLE) END) THEN min(CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b3" AS DOUBLE) END) ELSE min(c0."c_shelf_taps__b3") + avg((CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b3" AS DOUBLE) END - c0."c_shelf_taps__b3")) END AS "shelf_taps__b3_mean",
  var_samp((CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b3" AS DOUBLE) END - c0."c_shelf_taps__b3")) AS "shelf_taps__b3_var",
  CASE WHEN min(CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b4" AS DOUBLE) END) = max(CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b4" AS DOUBLE) END) THEN min(CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b4" AS DOUBLE) END) ELSE min(c0."c_shelf_taps__b4") + avg((CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b4" AS DOUBLE) END - c0."c_shelf_taps__b4")) END AS "shelf_taps__b4_mean",
  var_samp((CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b4" AS DOUBLE) END - c0."c_shelf_taps__b4")) AS "shelf_taps__b4_var",
  CASE WHEN min(CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b5" AS DOUBLE) END) = max(CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b5" AS DOUBLE) END) THEN min(CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b5" AS DOUBLE) END) ELSE min(c0."c_shelf_taps__b5") + avg((CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b5" AS DOUBLE) END - c0."c_shelf_taps__b5")) END AS "shelf_taps__b5_mean",
  var_samp((CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b5" AS DOUBLE) END - c0."c_shelf_taps__b5")) AS "shelf_taps__b5_var",
  CASE WHEN min(CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b6" AS DOUBLE) END) = max(CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b6" AS DOUBLE) END) THEN min(CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b6" AS DOUBLE) END) ELSE min(c0."c_shelf_taps__b6") + avg((CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b6" AS DOUBLE) END - c0."c_shelf_taps__b6")) END AS "shelf_taps__b6_mean",
  var_samp((CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b6" AS DOUBLE) END - c0."c_shelf_taps__b6")) AS "shelf_taps__b6_var",
  CASE WHEN min(CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b7" AS DOUBLE) END) = max(CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b7" AS DOUBLE) END) THEN min(CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b7" AS DOUBLE) END) ELSE min(c0."c_shelf_taps__b7") + avg((CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b7" AS DOUBLE) END - c0."c_shelf_taps__b7")) END AS "shelf_taps__b7_mean",
  var_samp((CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b7" AS DOUBLE) END - c0."c_shelf_taps__b7")) AS "shelf_taps__b7_var",
  -- shelf_taps by time since trigger: trend contrast L = -6·b1 -4·b2 -2·b3 +0·b4 +2·b5 +4·b6 +6·b7
  var_samp(-6 * (CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b1" AS DOUBLE) END - c0."c_shelf_taps__b1") + -4 * (CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b2" AS DOUBLE) END - c0."c_shelf_taps__b2") + -2 * (CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b3" AS DOUBLE) END - c0."c_shelf_taps__b3") + 0 * (CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b4" AS DOUBLE) END - c0."c_shelf_taps__b4") + 2 * (CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b5" AS DOUBLE) END - c0."c_shelf_taps__b5") + 4 * (CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b6" AS DOUBLE) END - c0."c_shelf_taps__b6") + 6 * (CASE WHEN u.mature_14d THEN CAST(u."m_shelf_taps__b7" AS DOUBLE) END - c0."c_shelf_taps__b7")) AS "shelf_taps__trend_var",
  -- basket_value (secondary, ratio): per-unit sum of amount where status = 'delivered' over per-unit count of rows where status = 'delivered'; window [trigger + 0d, trigger + 14d), mature units only; shared definition revenue_per_order from grocery.toml (definition 80b756ca)
  count(CASE WHEN u.mature_14d THEN 1 END) AS "basket_value__n",
  CASE WHEN min(CASE WHEN u.mature_14d THEN CAST(u."m_basket_value__num" AS DOUBLE) END) = max(CASE WHEN u.mature_14d THEN CAST(u."m_basket_value__num" AS DOUBLE) END) THEN min(CASE WHEN u.mature_14d THEN CAST(u."m_basket_value__num" AS DOUBLE) END) ELSE min(c0."c_basket_value__num") + avg((CASE WHEN u.mature_14d THEN CAST(u."m_basket_value__num" AS DOUBLE) END - c0."c_basket_value__num")) END AS "basket_value__num_mean",
  CASE WHEN min(CASE WHEN u.mature_14d THEN CAST(u."m_basket_value__den" AS DOUBLE) END) = max(CASE WHEN u.mature_14d THEN CAST(u."m_basket_value__den" AS DOUBLE) END) THEN min(CASE WHEN u.mature_14d THEN CAST(u."m_basket_value__den" AS DOUBLE) END) ELSE min(c0."c_basket_value__den") + avg((CASE WHEN u.mature_14d THEN CAST(u."m_basket_value__den" AS DOUBLE) END - c0."c_basket_value__den")) END AS "basket_value__den_mean",
  var_samp((CASE WHEN u.mature_14d THEN CAST(u."m_basket_value__num" AS DOUBLE) END - c0."c_basket_value__num")) AS "basket_value__num_var",
  var_samp((CASE WHEN u.mature_14d THEN CAST(u."m_basket_value__den" AS DOUBLE) END - c0."c_basket_value__den")) AS "basket_value__den_var",
  covar_samp((CASE WHEN u.mature_14d THEN CAST(u."m_basket_value__num" AS DOUBLE) END - c0."c_basket_value__num"), (CASE WHEN u.mature_14d THEN CAST(u."m_basket_value__den" AS DOUBLE) END - c0."c_basket_value__den")) AS "basket_value__cov",
  -- basket_value covariate: sum of amount where status = 'delivered' (definition of basket_value) in [trigger - 28d, trigger + 0d), before the trigger
  CASE WHEN min(CASE WHEN u.mature_14d THEN CAST(u."m_basket_value__x" AS DOUBLE) END) = max(CASE WHEN u.mature_14d THEN CAST(u."m_basket_value__x" AS DOUBLE) END) THEN min(CASE WHEN u.mature_14d THEN CAST(u."m_basket_value__x" AS DOUBLE) END) ELSE min(c0."c_basket_value__x") + avg((CASE WHEN u.mature_14d THEN CAST(u."m_basket_value__x" AS DOUBLE) END - c0."c_basket_value__x")) END AS "basket_value__x_mean",
  var_samp((CASE WHEN u.mature_14d THEN CAST(u."m_basket_value__x" AS DOUBLE) END - c0."c_basket_value__x")) AS "basket_value__x_var",
  covar_samp((CASE WHEN u.mature_14d THEN CAST(u."m_basket_value__num" AS DOUBLE) END - c0."c_basket_value__num"), (CASE WHEN u.mature_14d THEN CAST(u."m_basket_value__x" AS DOUBLE) END - c0."c_basket_value__x")) AS "basket_value__num_x_cov",
  covar_samp((CASE WHEN u.mature_14d THEN CAST(u."m_basket_value__den" AS DOUBLE) END - c0."c_basket_value__den"), (CASE WHEN u.mature_14d THEN CAST(u."m_basket_value__x" AS DOUBLE) END - c0."c_basket_value__x")) AS "basket_value__den_x_cov",
  sum(u."m_basket_value__num__nonfinite") AS "basket_value__nonfinite_rows",
  -- converted (secondary, proportion): share of units whose count of rows where status = 'delivered' is above 0; window [trigger + 0d, trigger + 14d), mature units only; shared definition ordered_at_all from grocery.toml (definition 29d6f30e)
  count(CASE WHEN u.mature_14d THEN 1 END) AS "converted__n",
  avg(CASE WHEN u.mature_14d THEN CASE WHEN u."m_converted" > 0 THEN 1.0 ELSE 0.0 END END) AS "converted__mean",
  var_samp(CASE WHEN u.mature_14d THEN CASE WHEN u."m_converted" > 0 THEN 1.0 ELSE 0.0 END END) AS "converted__var",
  -- cancelled (guard, mean): mean per unit of count of rows where status = 'cancelled'; window [trigger + 0d, trigger + 14d), mature units only; shared definition cancellations from grocery.toml (definition 9b45bd3c)
  count(CASE WHEN u.mature_14d THEN 1 END) AS "cancelled__n",
  CASE WHEN min(CASE WHEN u.mature_14d THEN CAST(u."m_cancelled" AS DOUBLE) END) = max(CASE WHEN u.mature_14d THEN CAST(u."m_cancelled" AS DOUBLE) END) THEN min(CASE WHEN u.mature_14d THEN CAST(u."m_cancelled" AS DOUBLE) END) ELSE min(c0."c_cancelled") + avg((CASE WHEN u.mature_14d THEN CAST(u."m_cancelled" AS DOUBLE) END - c0."c_cancelled")) END AS "cancelled__mean",
  var_samp((CASE WHEN u.mature_14d THEN CAST(u."m_cancelled" AS DOUBLE) END - c0."c_cancelled")) AS "cancelled__var",
  -- support_contacts (guard, mean): mean per unit of count of rows; window [trigger + 0d, trigger + 14d), mature units only; shared definition support_contacts from grocery.toml (definition 2753c20d)
  count(CASE WHEN u.mature_14d THEN 1 END) AS "support_contacts__n",
  CASE WHEN min(CASE WHEN u.mature_14d THEN CAST(u."m_support_contacts" AS DOUBLE) END) = max(CASE WHEN u.mature_14d THEN CAST(u."m_support_contacts" AS DOUBLE) END) THEN min(CASE WHEN u.mature_14d THEN CAST(u."m_support_contacts" AS DOUBLE) END) ELSE min(c0."c_support_contacts") + avg((CASE WHEN u.mature_14d THEN CAST(u."m_support_contacts" AS DOUBLE) END - c0."c_support_contacts")) END AS "support_contacts__mean",
  var_samp((CASE WHEN u.mature_14d THEN CAST(u."m_support_contacts" AS DOUBLE) END - c0."c_support_contacts")) AS "support_contacts__var"
FROM keyed_units AS u
JOIN centres AS c0 ON c0.variant = u.variant
GROUP BY GROUPING SETS ((u.variant), (u.variant, u."key_seg_platform"), (u.variant, u."key_seg_tenure"), (u.variant, CASE WHEN u.trigger_us >= 1773014400000000 THEN 'full' WHEN u.trigger_us >= 1772668800000000 THEN 'ramp' ELSE 'test' END))
ORDER BY "variant", "seg_platform", "seg_tenure", "rollout_step"
;

-- assay 0.1.0 health query for experiment reorder-shelf-2026-03 (spec fingerprint 1d68f22f07de8837)
-- Times are compared as integer microseconds since 1970-01-01 UTC; timestamps without a zone are read as UTC.
-- Exposures are read in [2026-03-02T00:00:00Z, 2026-04-13T00:00:00Z); outcome windows must have ended by 2026-04-13T00:00:00Z.
-- File paths are relative to the spec's directory.
-- Reads the cohort table of the setup statement.
WITH
-- Exposure rows of exposures inside the analysis window; rows without a unit or time are ignored.
exposure_rows AS NOT MATERIALIZED (
  SELECT
    x."customer_id" AS unit_id,
    CAST(x."variant" AS VARCHAR) AS variant,
    epoch_us(x."exposed_at") AS ts_us,
    coalesce(x."surface" = 'home', FALSE) AS qualifies,
    x."platform" AS "seg_platform"
  FROM read_parquet('data/exposures.parquet') AS x
  WHERE x."customer_id" IS NOT NULL AND x."exposed_at" IS NOT NULL
    AND epoch_us(x."exposed_at") >= 1772409600000000 AND epoch_us(x."exposed_at") < 1776038400000000
    AND x."exposed_at" >= TIMESTAMP '2026-02-28 00:00:00' AND x."exposed_at" < TIMESTAMP '2026-04-15 00:00:00'
),
-- Every triggered unit with the reasons it may be excluded, from the cohort table.
cohort AS (
  SELECT unit_id, variant, trigger_us, trigger_day, "seg_platform", "seg_tenure", "is_crossover", "is_unknown_variant", "fails_recent_order", "is_previously_exposed"
  FROM temp.main."assay_cohort"
  WHERE trigger_us IS NOT NULL
),
-- Exposure rows outside the analysis window, or without a unit or time.
ignored_rows AS (
  SELECT
    count(CASE WHEN x."customer_id" IS NULL THEN 1 END) AS null_unit,
    count(CASE WHEN x."exposed_at" IS NULL THEN 1 END) AS null_time,
    count(CASE WHEN epoch_us(x."exposed_at") < 1772409600000000 THEN 1 END) AS before_start,
    count(CASE WHEN epoch_us(x."exposed_at") >= 1776038400000000 THEN 1 END) AS after_end
  FROM read_parquet('data/exposures.parquet') AS x
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
  SELECT count(*) - count(s."customer_id") AS null_unit, count(*) - count(s."ordered_at") AS null_time
  FROM read_parquet('data/orders.parquet') AS s
),
-- Rows of taps that no metric or rule can use: no unit or no time.
nulls_2 AS (
  SELECT count(*) - count(s."customer_id") AS null_unit, count(*) - count(s."tapped_at") AS null_time
  FROM read_parquet('data/taps.parquet') AS s
),
-- Rows of support that no metric or rule can use: no unit or no time.
nulls_3 AS (
  SELECT count(*) - count(s."customer_id") AS null_unit, count(*) - count(s."contacted_at") AS null_time
  FROM read_parquet('data/support.parquet') AS s
),
-- Eligible units: one variant only, a declared variant, and every eligibility rule met at the trigger.
eligible AS (
  SELECT c.unit_id, c.variant, c.trigger_us, c.trigger_day, c."seg_platform", c."seg_tenure"
  FROM cohort AS c
  WHERE NOT c."is_crossover"
    AND NOT c."is_unknown_variant"
    AND NOT c."fails_recent_order"
    AND NOT c."is_previously_exposed"
),
-- Each unit's latest row of orders in the analysis period before the as-of time.
last_1 AS (
  SELECT s."customer_id" AS unit_id, max(epoch_us(s."ordered_at")) AS last_us
  FROM read_parquet('data/orders.parquet') AS s
  WHERE s."customer_id" IS NOT NULL AND epoch_us(s."ordered_at") >= 1772409600000000 AND epoch_us(s."ordered_at") < 1776038400000000
    AND s."ordered_at" >= TIMESTAMP '2026-02-28 00:00:00' AND s."ordered_at" < TIMESTAMP '2026-04-15 00:00:00'
  GROUP BY s."customer_id"
),
-- Each unit's latest row of support in the analysis period before the as-of time.
last_2 AS (
  SELECT s."customer_id" AS unit_id, max(epoch_us(s."contacted_at")) AS last_us
  FROM read_parquet('data/support.parquet') AS s
  WHERE s."customer_id" IS NOT NULL AND epoch_us(s."contacted_at") >= 1772409600000000 AND epoch_us(s."contacted_at") < 1776038400000000
    AND s."contacted_at" >= TIMESTAMP '2026-02-28 00:00:00' AND s."contacted_at" < TIMESTAMP '2026-04-15 00:00:00'
  GROUP BY s."customer_id"
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
  SELECT 'triggers' AS kind, NULL AS reason, NULL AS source, variant AS variant, trigger_day AS day, count(CASE WHEN NOT "is_previously_exposed" THEN 1 END) AS row_count, count(*) AS unit_count
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
  SELECT 'excluded' AS kind, 'rule:recent_order' AS reason, NULL AS source, variant AS variant, NULL AS day, count(*) AS row_count, count(*) AS unit_count
  FROM cohort
  WHERE "fails_recent_order"
  GROUP BY variant
  UNION ALL
  SELECT 'excluded' AS kind, 'previously_exposed' AS reason, NULL AS source, variant AS variant, NULL AS day, count(*) AS row_count, count(*) AS unit_count
  FROM cohort
  WHERE "is_previously_exposed"
  GROUP BY variant
  UNION ALL
  SELECT 'excluded' AS kind, 'any' AS reason, NULL AS source, variant AS variant, NULL AS day, count(*) AS row_count, count(*) AS unit_count
  FROM cohort
  WHERE "is_crossover" OR "is_unknown_variant" OR "fails_recent_order" OR "is_previously_exposed"
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
  SELECT 'ignored_outcome_rows' AS kind, 'null_unit' AS reason, 'taps' AS source, NULL AS variant, NULL AS day, null_unit AS row_count, NULL AS unit_count
  FROM nulls_2
  UNION ALL
  SELECT 'ignored_outcome_rows' AS kind, 'null_time' AS reason, 'taps' AS source, NULL AS variant, NULL AS day, null_time AS row_count, NULL AS unit_count
  FROM nulls_2
  UNION ALL
  SELECT 'ignored_outcome_rows' AS kind, 'null_unit' AS reason, 'support' AS source, NULL AS variant, NULL AS day, null_unit AS row_count, NULL AS unit_count
  FROM nulls_3
  UNION ALL
  SELECT 'ignored_outcome_rows' AS kind, 'null_time' AS reason, 'support' AS source, NULL AS variant, NULL AS day, null_time AS row_count, NULL AS unit_count
  FROM nulls_3
  UNION ALL
  SELECT 'unknown_variant' AS kind, NULL AS reason, NULL AS source, variant AS variant, NULL AS day, units AS row_count, units AS unit_count
  FROM unknown_values
  UNION ALL
  SELECT 'no_outcome_rows' AS kind, NULL AS reason, NULL AS source, variant AS variant, NULL AS day, eligible_units AS row_count, none_any AS unit_count
  FROM no_outcomes
  UNION ALL
  SELECT 'no_outcome_rows' AS kind, NULL AS reason, 'orders' AS source, variant AS variant, NULL AS day, eligible_units AS row_count, none_1 AS unit_count
  FROM no_outcomes
  UNION ALL
  SELECT 'no_outcome_rows' AS kind, NULL AS reason, 'support' AS source, variant AS variant, NULL AS day, eligible_units AS row_count, none_2 AS unit_count
  FROM no_outcomes
) AS h
ORDER BY h.kind, h.reason, h.source, h.variant, h.day
;

DROP TABLE IF EXISTS temp.main."assay_cohort"
;
