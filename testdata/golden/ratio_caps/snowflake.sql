-- assay 0.1.0 per-variant statistics query for experiment ratio-caps (spec fingerprint cbcd3dda7f10fcac)
-- Times are compared as integer microseconds since 1970-01-01 UTC; timestamps without a zone are read as UTC.
-- Exposures are read in [2026-06-01T00:00:00Z, 2026-07-01T00:00:00Z); outcome windows must have ended by 2026-07-01T00:00:00Z.
WITH
-- Exposure rows of exposures inside the analysis window; rows without a unit or time are ignored.
exposure_rows AS (
  SELECT
    x."account_id" AS unit_id,
    CAST(x."arm" AS VARCHAR) AS variant,
    DATE_PART(EPOCH_MICROSECOND, x."ts") AS ts_us,
    coalesce(x."page" IN ('cart', 'checkout'), FALSE) AS qualifies
  FROM "exposures" AS x
  WHERE x."account_id" IS NOT NULL AND x."ts" IS NOT NULL
    AND DATE_PART(EPOCH_MICROSECOND, x."ts") >= 1780272000000000 AND DATE_PART(EPOCH_MICROSECOND, x."ts") < 1782864000000000
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
-- Trigger: each unit's first qualifying exposure (a row qualifies when: page IN ('cart', 'checkout')).
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
    CAST(TO_TIMESTAMP_NTZ(t.trigger_us, 6) AS DATE) AS trigger_day,
    t.is_crossover,
    (t.variant IS NULL OR t.variant NOT IN ('control', 'threshold_30', 'threshold_40')) AS is_unknown_variant
  FROM triggers AS t
),
-- Eligible units: one variant only, a declared variant, and every eligibility rule met at the trigger.
eligible AS (
  SELECT c.unit_id, c.variant, c.trigger_us, c.trigger_day
  FROM cohort AS c
  WHERE NOT c."is_crossover"
    AND NOT c."is_unknown_variant"
),
-- One pass over orders for: m_revenue_per_session__num, m_big_spender, m_revenue, m_revenue__b1, m_revenue__b2, m_revenue__b3, m_revenue__b4, m_revenue__b5, m_revenue__b6, m_revenue__b7, m_distinct_orders.
"pass_orders" AS (
  SELECT
    r.unit_id,
    -- m_revenue_per_session__num: sum of gross - coalesce(discount, 0) in [trigger + 0d, trigger + 14d)
    CAST(sum(CASE WHEN r.dt_us >= 0 AND r.dt_us < 1209600000000 AND CAST(r."c_gross" - COALESCE(r."c_discount", 0) AS DOUBLE) - CAST(r."c_gross" - COALESCE(r."c_discount", 0) AS DOUBLE) = 0 THEN CAST(CAST(r."c_gross" - COALESCE(r."c_discount", 0) AS DOUBLE) AS NUMBER(38, 10)) END) AS DOUBLE) AS "m_revenue_per_session__num",
    count(CASE WHEN r.dt_us >= 0 AND r.dt_us < 1209600000000 AND NOT (CAST(r."c_gross" - COALESCE(r."c_discount", 0) AS DOUBLE) - CAST(r."c_gross" - COALESCE(r."c_discount", 0) AS DOUBLE) = 0) THEN 1 END) AS "m_revenue_per_session__num__nonfinite",
    -- m_big_spender: sum of gross in [trigger + 0d, trigger + 14d)
    CAST(sum(CASE WHEN r.dt_us >= 0 AND r.dt_us < 1209600000000 AND CAST(r."c_gross" AS DOUBLE) - CAST(r."c_gross" AS DOUBLE) = 0 THEN CAST(CAST(r."c_gross" AS DOUBLE) AS NUMBER(38, 10)) END) AS DOUBLE) AS "m_big_spender",
    count(CASE WHEN r.dt_us >= 0 AND r.dt_us < 1209600000000 AND NOT (CAST(r."c_gross" AS DOUBLE) - CAST(r."c_gross" AS DOUBLE) = 0) THEN 1 END) AS "m_big_spender__nonfinite",
    -- m_revenue: sum of gross in [trigger + 0d, trigger + 7d)
    CAST(sum(CASE WHEN r.dt_us >= 0 AND r.dt_us < 604800000000 AND CAST(r."c_gross" AS DOUBLE) - CAST(r."c_gross" AS DOUBLE) = 0 THEN CAST(CAST(r."c_gross" AS DOUBLE) AS NUMBER(38, 10)) END) AS DOUBLE) AS "m_revenue",
    count(CASE WHEN r.dt_us >= 0 AND r.dt_us < 604800000000 AND NOT (CAST(r."c_gross" AS DOUBLE) - CAST(r."c_gross" AS DOUBLE) = 0) THEN 1 END) AS "m_revenue__nonfinite",
    -- m_revenue__b1: sum of gross in [trigger + 0d, trigger + 1d)
    CAST(sum(CASE WHEN r.dt_us >= 0 AND r.dt_us < 86400000000 AND CAST(r."c_gross" AS DOUBLE) - CAST(r."c_gross" AS DOUBLE) = 0 THEN CAST(CAST(r."c_gross" AS DOUBLE) AS NUMBER(38, 10)) END) AS DOUBLE) AS "m_revenue__b1",
    -- m_revenue__b2: sum of gross in [trigger + 1d, trigger + 2d)
    CAST(sum(CASE WHEN r.dt_us >= 86400000000 AND r.dt_us < 172800000000 AND CAST(r."c_gross" AS DOUBLE) - CAST(r."c_gross" AS DOUBLE) = 0 THEN CAST(CAST(r."c_gross" AS DOUBLE) AS NUMBER(38, 10)) END) AS DOUBLE) AS "m_revenue__b2",
    -- m_revenue__b3: sum of gross in [trigger + 2d, trigger + 3d)
    CAST(sum(CASE WHEN r.dt_us >= 172800000000 AND r.dt_us < 259200000000 AND CAST(r."c_gross" AS DOUBLE) - CAST(r."c_gross" AS DOUBLE) = 0 THEN CAST(CAST(r."c_gross" AS DOUBLE) AS NUMBER(38, 10)) END) AS DOUBLE) AS "m_revenue__b3",
    -- m_revenue__b4: sum of gross in [trigger + 3d, trigger + 4d)
    CAST(sum(CASE WHEN r.dt_us >= 259200000000 AND r.dt_us < 345600000000 AND CAST(r."c_gross" AS DOUBLE) - CAST(r."c_gross" AS DOUBLE) = 0 THEN CAST(CAST(r."c_gross" AS DOUBLE) AS NUMBER(38, 10)) END) AS DOUBLE) AS "m_revenue__b4",
    -- m_revenue__b5: sum of gross in [trigger + 4d, trigger + 5d)
    CAST(sum(CASE WHEN r.dt_us >= 345600000000 AND r.dt_us < 432000000000 AND CAST(r."c_gross" AS DOUBLE) - CAST(r."c_gross" AS DOUBLE) = 0 THEN CAST(CAST(r."c_gross" AS DOUBLE) AS NUMBER(38, 10)) END) AS DOUBLE) AS "m_revenue__b5",
    -- m_revenue__b6: sum of gross in [trigger + 5d, trigger + 6d)
    CAST(sum(CASE WHEN r.dt_us >= 432000000000 AND r.dt_us < 518400000000 AND CAST(r."c_gross" AS DOUBLE) - CAST(r."c_gross" AS DOUBLE) = 0 THEN CAST(CAST(r."c_gross" AS DOUBLE) AS NUMBER(38, 10)) END) AS DOUBLE) AS "m_revenue__b6",
    -- m_revenue__b7: sum of gross in [trigger + 6d, trigger + 7d)
    CAST(sum(CASE WHEN r.dt_us >= 518400000000 AND r.dt_us < 604800000000 AND CAST(r."c_gross" AS DOUBLE) - CAST(r."c_gross" AS DOUBLE) = 0 THEN CAST(CAST(r."c_gross" AS DOUBLE) AS NUMBER(38, 10)) END) AS DOUBLE) AS "m_revenue__b7",
    -- m_distinct_orders: distinct values of order_id where sku_count >= 1 in [trigger + 0d, trigger + 36h)
    count(DISTINCT CASE WHEN r.dt_us >= 0 AND r.dt_us < 129600000000 AND (r."c_sku_count" >= 1) THEN r."c_order_id" END) AS "m_distinct_orders"
  FROM (
    SELECT e.unit_id, DATE_PART(EPOCH_MICROSECOND, s."created_at") - e.trigger_us AS dt_us, s."discount" AS "c_discount", s."gross" AS "c_gross", s."order_id" AS "c_order_id", s."sku_count" AS "c_sku_count"
    FROM eligible AS e
    JOIN "orders" AS s ON s."account_id" = e.unit_id
  ) AS r
  WHERE r.dt_us >= 0 AND r.dt_us < 1209600000000
  GROUP BY r.unit_id
),
-- One pass over sessions for: m_revenue_per_session__den, m_long_sessions.
"pass_sessions" AS (
  SELECT
    r.unit_id,
    -- m_revenue_per_session__den: count of rows in [trigger + 0d, trigger + 14d)
    count(CASE WHEN r.dt_us >= 0 AND r.dt_us < 1209600000000 THEN 1 END) AS "m_revenue_per_session__den",
    -- m_long_sessions: count of rows where duration_s BETWEEN 600 AND 7200 in [trigger + 1h, trigger + 14d)
    count(CASE WHEN r.dt_us >= 3600000000 AND r.dt_us < 1209600000000 AND (r."c_duration_s" BETWEEN 600 AND 7200) THEN 1 END) AS "m_long_sessions"
  FROM (
    SELECT e.unit_id, DATE_PART(EPOCH_MICROSECOND, s."started_at") - e.trigger_us AS dt_us, s."duration_s" AS "c_duration_s"
    FROM eligible AS e
    JOIN "sessions" AS s ON s."account_id" = e.unit_id
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
    (e.trigger_us + 129600000000 <= 1782864000000000) AS mature_36h,
    (e.trigger_us + 604800000000 <= 1782864000000000) AS mature_7d,
    (e.trigger_us + 1209600000000 <= 1782864000000000) AS mature_14d,
    coalesce(p1."m_revenue_per_session__num", 0) AS "m_revenue_per_session__num",
    coalesce(p1."m_revenue_per_session__num__nonfinite", 0) AS "m_revenue_per_session__num__nonfinite",
    coalesce(p1."m_big_spender", 0) AS "m_big_spender",
    coalesce(p1."m_big_spender__nonfinite", 0) AS "m_big_spender__nonfinite",
    coalesce(p1."m_revenue", 0) AS "m_revenue",
    coalesce(p1."m_revenue__nonfinite", 0) AS "m_revenue__nonfinite",
    coalesce(p1."m_revenue__b1", 0) AS "m_revenue__b1",
    coalesce(p1."m_revenue__b2", 0) AS "m_revenue__b2",
    coalesce(p1."m_revenue__b3", 0) AS "m_revenue__b3",
    coalesce(p1."m_revenue__b4", 0) AS "m_revenue__b4",
    coalesce(p1."m_revenue__b5", 0) AS "m_revenue__b5",
    coalesce(p1."m_revenue__b6", 0) AS "m_revenue__b6",
    coalesce(p1."m_revenue__b7", 0) AS "m_revenue__b7",
    coalesce(p1."m_distinct_orders", 0) AS "m_distinct_orders",
    coalesce(p2."m_revenue_per_session__den", 0) AS "m_revenue_per_session__den",
    coalesce(p2."m_long_sessions", 0) AS "m_long_sessions"
  FROM eligible AS e
  LEFT JOIN "pass_orders" AS p1 ON p1.unit_id = e.unit_id
  LEFT JOIN "pass_sessions" AS p2 ON p2.unit_id = e.unit_id
),
-- Winsorising caps: pooled quantiles over mature units of all variants.
caps AS (
  SELECT
    PERCENTILE_CONT(0.99) WITHIN GROUP (ORDER BY CASE WHEN u.mature_14d THEN CAST(u."m_revenue_per_session__num" AS DOUBLE) END) AS "cap_revenue_per_session__num"
  FROM unit_values AS u
),
-- Centres: each variant's means, subtracted before the variance and covariance aggregates so
-- their partial sums stay small (numerically stable whatever the engine's merge order).
centres AS (
  SELECT
    u.variant,
    avg(CASE WHEN u.mature_14d THEN CAST(LEAST(u."m_revenue_per_session__num", k."cap_revenue_per_session__num") AS DOUBLE) END) AS "c_revenue_per_session__num",
    avg(CASE WHEN u.mature_14d THEN CAST(u."m_revenue_per_session__den" AS DOUBLE) END) AS "c_revenue_per_session__den",
    avg(CASE WHEN u.mature_7d THEN CAST(LEAST(u."m_revenue", 500) AS DOUBLE) END) AS "c_revenue",
    avg(CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b1" AS DOUBLE) END) AS "c_revenue__b1",
    avg(CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b2" AS DOUBLE) END) AS "c_revenue__b2",
    avg(CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b3" AS DOUBLE) END) AS "c_revenue__b3",
    avg(CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b4" AS DOUBLE) END) AS "c_revenue__b4",
    avg(CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b5" AS DOUBLE) END) AS "c_revenue__b5",
    avg(CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b6" AS DOUBLE) END) AS "c_revenue__b6",
    avg(CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b7" AS DOUBLE) END) AS "c_revenue__b7",
    avg(CASE WHEN u.mature_36h THEN CAST(u."m_distinct_orders" AS DOUBLE) END) AS "c_distinct_orders",
    avg(CASE WHEN u.mature_14d THEN CAST(u."m_long_sessions" AS DOUBLE) END) AS "c_long_sessions"
  FROM unit_values AS u
  CROSS JOIN caps AS k
  GROUP BY u.variant
)
SELECT
  'cbcd3dda7f10fcac' AS "spec_fingerprint",
  'as_of=2026-07-01T00:00:00Z' AS "compile_options",
  u.variant AS "variant",
  count(*) AS "units",
  -- revenue_per_session (primary, ratio): per-unit sum of gross - coalesce(discount, 0), capped at the pooled 0.99 quantile over per-unit count of rows; window [trigger + 0d, trigger + 14d), mature units only
  count(CASE WHEN u.mature_14d THEN 1 END) AS "revenue_per_session__n",
  CASE WHEN min(CASE WHEN u.mature_14d THEN CAST(LEAST(u."m_revenue_per_session__num", k."cap_revenue_per_session__num") AS DOUBLE) END) = max(CASE WHEN u.mature_14d THEN CAST(LEAST(u."m_revenue_per_session__num", k."cap_revenue_per_session__num") AS DOUBLE) END) THEN min(CASE WHEN u.mature_14d THEN CAST(LEAST(u."m_revenue_per_session__num", k."cap_revenue_per_session__num") AS DOUBLE) END) ELSE min(c0."c_revenue_per_session__num") + avg((CASE WHEN u.mature_14d THEN CAST(LEAST(u."m_revenue_per_session__num", k."cap_revenue_per_session__num") AS DOUBLE) END - c0."c_revenue_per_session__num")) END AS "revenue_per_session__num_mean",
  CASE WHEN min(CASE WHEN u.mature_14d THEN CAST(u."m_revenue_per_session__den" AS DOUBLE) END) = max(CASE WHEN u.mature_14d THEN CAST(u."m_revenue_per_session__den" AS DOUBLE) END) THEN min(CASE WHEN u.mature_14d THEN CAST(u."m_revenue_per_session__den" AS DOUBLE) END) ELSE min(c0."c_revenue_per_session__den") + avg((CASE WHEN u.mature_14d THEN CAST(u."m_revenue_per_session__den" AS DOUBLE) END - c0."c_revenue_per_session__den")) END AS "revenue_per_session__den_mean",
  VAR_SAMP((CASE WHEN u.mature_14d THEN CAST(LEAST(u."m_revenue_per_session__num", k."cap_revenue_per_session__num") AS DOUBLE) END - c0."c_revenue_per_session__num")) AS "revenue_per_session__num_var",
  VAR_SAMP((CASE WHEN u.mature_14d THEN CAST(u."m_revenue_per_session__den" AS DOUBLE) END - c0."c_revenue_per_session__den")) AS "revenue_per_session__den_var",
  COVAR_SAMP((CASE WHEN u.mature_14d THEN CAST(LEAST(u."m_revenue_per_session__num", k."cap_revenue_per_session__num") AS DOUBLE) END - c0."c_revenue_per_session__num"), (CASE WHEN u.mature_14d THEN CAST(u."m_revenue_per_session__den" AS DOUBLE) END - c0."c_revenue_per_session__den")) AS "revenue_per_session__cov",
  sum(u."m_revenue_per_session__num__nonfinite") AS "revenue_per_session__nonfinite_rows",
  -- big_spender (secondary, proportion): share of units whose sum of gross is above 100; window [trigger + 0d, trigger + 14d), mature units only
  count(CASE WHEN u.mature_14d THEN 1 END) AS "big_spender__n",
  sum(u."m_big_spender__nonfinite") AS "big_spender__nonfinite_rows",
  avg(CASE WHEN u.mature_14d THEN CASE WHEN u."m_big_spender" > 100 THEN CAST(1 AS DOUBLE) ELSE CAST(0 AS DOUBLE) END END) AS "big_spender__mean",
  VAR_SAMP(CASE WHEN u.mature_14d THEN CASE WHEN u."m_big_spender" > 100 THEN CAST(1 AS DOUBLE) ELSE CAST(0 AS DOUBLE) END END) AS "big_spender__var",
  -- revenue (secondary, mean): mean per unit of sum of gross, capped at 500; window [trigger + 0d, trigger + 7d), mature units only
  count(CASE WHEN u.mature_7d THEN 1 END) AS "revenue__n",
  sum(u."m_revenue__nonfinite") AS "revenue__nonfinite_rows",
  CASE WHEN min(CASE WHEN u.mature_7d THEN CAST(LEAST(u."m_revenue", 500) AS DOUBLE) END) = max(CASE WHEN u.mature_7d THEN CAST(LEAST(u."m_revenue", 500) AS DOUBLE) END) THEN min(CASE WHEN u.mature_7d THEN CAST(LEAST(u."m_revenue", 500) AS DOUBLE) END) ELSE min(c0."c_revenue") + avg((CASE WHEN u.mature_7d THEN CAST(LEAST(u."m_revenue", 500) AS DOUBLE) END - c0."c_revenue")) END AS "revenue__mean",
  VAR_SAMP((CASE WHEN u.mature_7d THEN CAST(LEAST(u."m_revenue", 500) AS DOUBLE) END - c0."c_revenue")) AS "revenue__var",
  -- revenue by time since trigger: 7 buckets of 1d, each in [trigger + 0d, trigger + 1d) …
  CASE WHEN min(CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b1" AS DOUBLE) END) = max(CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b1" AS DOUBLE) END) THEN min(CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b1" AS DOUBLE) END) ELSE min(c0."c_revenue__b1") + avg((CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b1" AS DOUBLE) END - c0."c_revenue__b1")) END AS "revenue__b1_mean",
  VAR_SAMP((CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b1" AS DOUBLE) END - c0."c_revenue__b1")) AS "revenue__b1_var",
  CASE WHEN min(CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b2" AS DOUBLE) END) = max(CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b2" AS DOUBLE) END) THEN min(CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b2" AS DOUBLE) END) ELSE min(c0."c_revenue__b2") + avg((CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b2" AS DOUBLE) END - c0."c_revenue__b2")) END AS "revenue__b2_mean",
  VAR_SAMP((CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b2" AS DOUBLE) END - c0."c_revenue__b2")) AS "revenue__b2_var",
  CASE WHEN min(CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b3" AS DOUBLE) END) = max(CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b3" AS DOUBLE) END) THEN min(CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b3" AS DOUBLE) END) ELSE min(c0."c_revenue__b3") + avg((CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b3" AS DOUBLE) END - c0."c_revenue__b3")) END AS "revenue__b3_mean",
  VAR_SAMP((CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b3" AS DOUBLE) END - c0."c_revenue__b3")) AS "revenue__b3_var",
  CASE WHEN min(CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b4" AS DOUBLE) END) = max(CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b4" AS DOUBLE) END) THEN min(CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b4" AS DOUBLE) END) ELSE min(c0."c_revenue__b4") + avg((CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b4" AS DOUBLE) END - c0."c_revenue__b4")) END AS "revenue__b4_mean",
  VAR_SAMP((CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b4" AS DOUBLE) END - c0."c_revenue__b4")) AS "revenue__b4_var",
  CASE WHEN min(CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b5" AS DOUBLE) END) = max(CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b5" AS DOUBLE) END) THEN min(CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b5" AS DOUBLE) END) ELSE min(c0."c_revenue__b5") + avg((CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b5" AS DOUBLE) END - c0."c_revenue__b5")) END AS "revenue__b5_mean",
  VAR_SAMP((CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b5" AS DOUBLE) END - c0."c_revenue__b5")) AS "revenue__b5_var",
  CASE WHEN min(CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b6" AS DOUBLE) END) = max(CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b6" AS DOUBLE) END) THEN min(CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b6" AS DOUBLE) END) ELSE min(c0."c_revenue__b6") + avg((CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b6" AS DOUBLE) END - c0."c_revenue__b6")) END AS "revenue__b6_mean",
  VAR_SAMP((CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b6" AS DOUBLE) END - c0."c_revenue__b6")) AS "revenue__b6_var",
  CASE WHEN min(CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b7" AS DOUBLE) END) = max(CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b7" AS DOUBLE) END) THEN min(CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b7" AS DOUBLE) END) ELSE min(c0."c_revenue__b7") + avg((CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b7" AS DOUBLE) END - c0."c_revenue__b7")) END AS "revenue__b7_mean",
  VAR_SAMP((CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b7" AS DOUBLE) END - c0."c_revenue__b7")) AS "revenue__b7_var",
  -- revenue by time since trigger: trend contrast L = -6·b1 -4·b2 -2·b3 +0·b4 +2·b5 +4·b6 +6·b7
  VAR_SAMP(-6 * (CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b1" AS DOUBLE) END - c0."c_revenue__b1") + -4 * (CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b2" AS DOUBLE) END - c0."c_revenue__b2") + -2 * (CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b3" AS DOUBLE) END - c0."c_revenue__b3") + 0 * (CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b4" AS DOUBLE) END - c0."c_revenue__b4") + 2 * (CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b5" AS DOUBLE) END - c0."c_revenue__b5") + 4 * (CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b6" AS DOUBLE) END - c0."c_revenue__b6") + 6 * (CASE WHEN u.mature_7d THEN CAST(u."m_revenue__b7" AS DOUBLE) END - c0."c_revenue__b7")) AS "revenue__trend_var",
  -- distinct_orders (mechanism, mean): mean per unit of distinct values of order_id where sku_count >= 1; window [trigger + 0d, trigger + 36h), mature units only
  count(CASE WHEN u.mature_36h THEN 1 END) AS "distinct_orders__n",
  CASE WHEN min(CASE WHEN u.mature_36h THEN CAST(u."m_distinct_orders" AS DOUBLE) END) = max(CASE WHEN u.mature_36h THEN CAST(u."m_distinct_orders" AS DOUBLE) END) THEN min(CASE WHEN u.mature_36h THEN CAST(u."m_distinct_orders" AS DOUBLE) END) ELSE min(c0."c_distinct_orders") + avg((CASE WHEN u.mature_36h THEN CAST(u."m_distinct_orders" AS DOUBLE) END - c0."c_distinct_orders")) END AS "distinct_orders__mean",
  VAR_SAMP((CASE WHEN u.mature_36h THEN CAST(u."m_distinct_orders" AS DOUBLE) END - c0."c_distinct_orders")) AS "distinct_orders__var",
  -- long_sessions (guard, mean): mean per unit of count of rows where duration_s BETWEEN 600 AND 7200; window [trigger + 1h, trigger + 14d), mature units only
  count(CASE WHEN u.mature_14d THEN 1 END) AS "long_sessions__n",
  CASE WHEN min(CASE WHEN u.mature_14d THEN CAST(u."m_long_sessions" AS DOUBLE) END) = max(CASE WHEN u.mature_14d THEN CAST(u."m_long_sessions" AS DOUBLE) END) THEN min(CASE WHEN u.mature_14d THEN CAST(u."m_long_sessions" AS DOUBLE) END) ELSE min(c0."c_long_sessions") + avg((CASE WHEN u.mature_14d THEN CAST(u."m_long_sessions" AS DOUBLE) END - c0."c_long_sessions")) END AS "long_sessions__mean",
  VAR_SAMP((CASE WHEN u.mature_14d THEN CAST(u."m_long_sessions" AS DOUBLE) END - c0."c_long_sessions")) AS "long_sessions__var"
FROM unit_values AS u
CROSS JOIN caps AS k
JOIN centres AS c0 ON c0.variant = u.variant
GROUP BY u.variant
ORDER BY "variant"
;

-- assay 0.1.0 health query for experiment ratio-caps (spec fingerprint cbcd3dda7f10fcac)
-- Times are compared as integer microseconds since 1970-01-01 UTC; timestamps without a zone are read as UTC.
-- Exposures are read in [2026-06-01T00:00:00Z, 2026-07-01T00:00:00Z); outcome windows must have ended by 2026-07-01T00:00:00Z.
WITH
-- Exposure rows of exposures inside the analysis window; rows without a unit or time are ignored.
exposure_rows AS (
  SELECT
    x."account_id" AS unit_id,
    CAST(x."arm" AS VARCHAR) AS variant,
    DATE_PART(EPOCH_MICROSECOND, x."ts") AS ts_us,
    coalesce(x."page" IN ('cart', 'checkout'), FALSE) AS qualifies
  FROM "exposures" AS x
  WHERE x."account_id" IS NOT NULL AND x."ts" IS NOT NULL
    AND DATE_PART(EPOCH_MICROSECOND, x."ts") >= 1780272000000000 AND DATE_PART(EPOCH_MICROSECOND, x."ts") < 1782864000000000
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
-- Trigger: each unit's first qualifying exposure (a row qualifies when: page IN ('cart', 'checkout')).
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
    CAST(TO_TIMESTAMP_NTZ(t.trigger_us, 6) AS DATE) AS trigger_day,
    t.is_crossover,
    (t.variant IS NULL OR t.variant NOT IN ('control', 'threshold_30', 'threshold_40')) AS is_unknown_variant
  FROM triggers AS t
),
-- Exposure rows outside the analysis window, or without a unit or time.
ignored_rows AS (
  SELECT
    count(CASE WHEN x."account_id" IS NULL THEN 1 END) AS null_unit,
    count(CASE WHEN x."ts" IS NULL THEN 1 END) AS null_time,
    count(CASE WHEN DATE_PART(EPOCH_MICROSECOND, x."ts") < 1780272000000000 THEN 1 END) AS before_start,
    count(CASE WHEN DATE_PART(EPOCH_MICROSECOND, x."ts") >= 1782864000000000 THEN 1 END) AS after_end
  FROM "exposures" AS x
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
  SELECT count(*) - count(s."account_id") AS null_unit, count(*) - count(s."created_at") AS null_time
  FROM "orders" AS s
),
-- Rows of sessions that no metric or rule can use: no unit or no time.
nulls_2 AS (
  SELECT count(*) - count(s."account_id") AS null_unit, count(*) - count(s."started_at") AS null_time
  FROM "sessions" AS s
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
  SELECT s."account_id" AS unit_id, max(DATE_PART(EPOCH_MICROSECOND, s."created_at")) AS last_us
  FROM "orders" AS s
  WHERE s."account_id" IS NOT NULL AND DATE_PART(EPOCH_MICROSECOND, s."created_at") >= 1780272000000000 AND DATE_PART(EPOCH_MICROSECOND, s."created_at") < 1782864000000000
  GROUP BY s."account_id"
),
-- Each unit's latest row of sessions in the analysis period before the as-of time.
last_2 AS (
  SELECT s."account_id" AS unit_id, max(DATE_PART(EPOCH_MICROSECOND, s."started_at")) AS last_us
  FROM "sessions" AS s
  WHERE s."account_id" IS NOT NULL AND DATE_PART(EPOCH_MICROSECOND, s."started_at") >= 1780272000000000 AND DATE_PART(EPOCH_MICROSECOND, s."started_at") < 1782864000000000
  GROUP BY s."account_id"
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
  SELECT 'exposures' AS kind, NULL AS reason, NULL AS source, variant AS variant, CAST(TO_TIMESTAMP_NTZ(ts_us, 6) AS DATE) AS day, count(*) AS row_count, count(DISTINCT unit_id) AS unit_count
  FROM exposure_rows
  GROUP BY variant, CAST(TO_TIMESTAMP_NTZ(ts_us, 6) AS DATE)
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
  SELECT 'ignored_outcome_rows' AS kind, 'null_unit' AS reason, 'sessions' AS source, NULL AS variant, NULL AS day, null_unit AS row_count, NULL AS unit_count
  FROM nulls_2
  UNION ALL
  SELECT 'ignored_outcome_rows' AS kind, 'null_time' AS reason, 'sessions' AS source, NULL AS variant, NULL AS day, null_time AS row_count, NULL AS unit_count
  FROM nulls_2
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
  SELECT 'no_outcome_rows' AS kind, NULL AS reason, 'sessions' AS source, variant AS variant, NULL AS day, eligible_units AS row_count, none_2 AS unit_count
  FROM no_outcomes
) AS h
ORDER BY h.kind, h.reason, h.source, h.variant, h.day
;
