WITH "binned" AS (
  SELECT
    "application_id",
    CASE
      WHEN "age" < CAST(25.0 AS DOUBLE)
      THEN '[-inf, 25)'
      WHEN "age" < CAST(40.0 AS DOUBLE)
      THEN '[25, 40)'
      WHEN "age" IS NULL
      THEN 'missing'
      WHEN "age" = CAST('NaN' AS DOUBLE)
      THEN 'missing'
      ELSE '[40, inf)'
    END AS "age_bin",
    CASE
      WHEN "age" < CAST(25.0 AS DOUBLE)
      THEN CAST(0.5 AS DOUBLE)
      WHEN "age" < CAST(40.0 AS DOUBLE)
      THEN CAST(-0.1 AS DOUBLE)
      WHEN "age" IS NULL
      THEN CAST(0.2 AS DOUBLE)
      WHEN "age" = CAST('NaN' AS DOUBLE)
      THEN CAST(0.2 AS DOUBLE)
      ELSE CAST(-0.6 AS DOUBLE)
    END AS "__scoremon_value_0",
    COALESCE(
      MAP(['N1', 'N2', 'S1'], ['north', 'north', 'south'])["region_code"],
      CASE WHEN "region_code" IS NULL THEN 'missing' ELSE 'elsewhere' END
    ) AS "region_bin",
    COALESCE(
      MAP(
        ['N1', 'N2', 'S1'],
        [CAST(0.3 AS DOUBLE), CAST(0.3 AS DOUBLE), CAST(-0.1 AS DOUBLE)]
      )["region_code"],
      CASE
        WHEN "region_code" IS NULL
        THEN CAST(0.2 AS DOUBLE)
        ELSE CAST(0.05 AS DOUBLE)
      END
    ) AS "__scoremon_value_1",
    CASE
      WHEN "utilisation" < CAST(0.0 AS DOUBLE)
      THEN 0
      WHEN "utilisation" <= CAST(1.2 AS DOUBLE)
      THEN 1
      WHEN "utilisation" IS NULL
      THEN 3
      WHEN "utilisation" = CAST('NaN' AS DOUBLE)
      THEN 3
      ELSE 2
    END AS "__scoremon_bin_2",
    CASE
      WHEN "utilisation" < CAST(0.0 AS DOUBLE)
      THEN CAST(0.0 AS DOUBLE)
      WHEN "utilisation" <= CAST(1.2 AS DOUBLE)
      THEN CAST("utilisation" AS DOUBLE)
      ELSE CAST(1.2 AS DOUBLE)
    END AS "__scoremon_value_2"
  FROM "input"
), "pointed" AS (
  SELECT
    "application_id",
    "age_bin",
    CAST(-28.85390081777927 AS DOUBLE) * "__scoremon_value_0" AS "age_points",
    "region_bin",
    CAST(-28.85390081777927 AS DOUBLE) * "__scoremon_value_1" AS "region_points",
    ['clipped_low', 'in_range', 'clipped_high', 'missing']["__scoremon_bin_2" + 1] AS "utilisation_bin",
    CASE
      WHEN "__scoremon_bin_2" = 3
      THEN CAST(-11.541560327111709 AS DOUBLE)
      ELSE CAST(-43.2808512266689 AS DOUBLE) * (
        "__scoremon_value_2" - CAST(0.0 AS DOUBLE)
      )
    END AS "utilisation_points",
    CAST(-2.0 AS DOUBLE) + "__scoremon_value_0" + "__scoremon_value_1" + CASE
      WHEN "__scoremon_bin_2" = 3
      THEN CAST(0.4 AS DOUBLE)
      ELSE CAST(1.5 AS DOUBLE) * (
        "__scoremon_value_2" - CAST(0.0 AS DOUBLE)
      )
    END AS "__scoremon_eta"
  FROM "binned"
), "totalled" AS (
  SELECT
    "application_id",
    "age_bin",
    "age_points",
    "region_bin",
    "region_points",
    "utilisation_bin",
    "utilisation_points",
    "__scoremon_eta",
    CAST(544.830677840064 AS DOUBLE) + "age_points" + "region_points" + "utilisation_points" AS "score",
    CASE
      WHEN (
        CAST(17.312340490667562 AS DOUBLE) - (
          "age_points"
        )
      ) * CAST(1000000000.0 AS DOUBLE) >= CAST(4503599627370496.0 AS DOUBLE)
      THEN (
        CAST(17.312340490667562 AS DOUBLE) - (
          "age_points"
        )
      ) * CAST(1000000000.0 AS DOUBLE)
      WHEN (
        CAST(17.312340490667562 AS DOUBLE) - (
          "age_points"
        )
      ) * CAST(1000000000.0 AS DOUBLE) < CAST(0.5 AS DOUBLE)
      THEN CAST(0.0 AS DOUBLE)
      ELSE CAST(FLOOR(
        (
          CAST(17.312340490667562 AS DOUBLE) - (
            "age_points"
          )
        ) * CAST(1000000000.0 AS DOUBLE) + CAST(0.5 AS DOUBLE)
      ) AS DOUBLE)
    END AS "__scoremon_shortfall_0",
    CASE
      WHEN (
        CAST(2.885390081777927 AS DOUBLE) - (
          "region_points"
        )
      ) * CAST(1000000000.0 AS DOUBLE) >= CAST(4503599627370496.0 AS DOUBLE)
      THEN (
        CAST(2.885390081777927 AS DOUBLE) - (
          "region_points"
        )
      ) * CAST(1000000000.0 AS DOUBLE)
      WHEN (
        CAST(2.885390081777927 AS DOUBLE) - (
          "region_points"
        )
      ) * CAST(1000000000.0 AS DOUBLE) < CAST(0.5 AS DOUBLE)
      THEN CAST(0.0 AS DOUBLE)
      ELSE CAST(FLOOR(
        (
          CAST(2.885390081777927 AS DOUBLE) - (
            "region_points"
          )
        ) * CAST(1000000000.0 AS DOUBLE) + CAST(0.5 AS DOUBLE)
      ) AS DOUBLE)
    END AS "__scoremon_shortfall_1",
    CASE
      WHEN (
        CAST(-0.0 AS DOUBLE) - (
          "utilisation_points"
        )
      ) * CAST(1000000000.0 AS DOUBLE) >= CAST(4503599627370496.0 AS DOUBLE)
      THEN (
        CAST(-0.0 AS DOUBLE) - (
          "utilisation_points"
        )
      ) * CAST(1000000000.0 AS DOUBLE)
      WHEN (
        CAST(-0.0 AS DOUBLE) - (
          "utilisation_points"
        )
      ) * CAST(1000000000.0 AS DOUBLE) < CAST(0.5 AS DOUBLE)
      THEN CAST(0.0 AS DOUBLE)
      ELSE CAST(FLOOR(
        (
          CAST(-0.0 AS DOUBLE) - (
            "utilisation_points"
          )
        ) * CAST(1000000000.0 AS DOUBLE) + CAST(0.5 AS DOUBLE)
      ) AS DOUBLE)
    END AS "__scoremon_shortfall_2"
  FROM "pointed"
), "best_1" AS (
  SELECT
    "application_id",
    "age_bin",
    "age_points",
    "region_bin",
    "region_points",
    "utilisation_bin",
    "utilisation_points",
    "__scoremon_eta",
    "score",
    "__scoremon_shortfall_0",
    "__scoremon_shortfall_1",
    "__scoremon_shortfall_2",
    GREATEST("__scoremon_shortfall_0", "__scoremon_shortfall_1", "__scoremon_shortfall_2") AS "__scoremon_best_1"
  FROM "totalled"
), "picked_1" AS (
  SELECT
    "application_id",
    "age_bin",
    "age_points",
    "region_bin",
    "region_points",
    "utilisation_bin",
    "utilisation_points",
    "__scoremon_eta",
    "score",
    "__scoremon_shortfall_0",
    "__scoremon_shortfall_1",
    "__scoremon_shortfall_2",
    "__scoremon_best_1",
    CASE
      WHEN "__scoremon_best_1" <= CAST(0.0 AS DOUBLE)
      THEN NULL
      WHEN "__scoremon_shortfall_0" = "__scoremon_best_1"
      THEN 0
      WHEN "__scoremon_shortfall_1" = "__scoremon_best_1"
      THEN 1
      ELSE 2
    END AS "__scoremon_pick_1"
  FROM "best_1"
), "best_2" AS (
  SELECT
    "application_id",
    "age_bin",
    "age_points",
    "region_bin",
    "region_points",
    "utilisation_bin",
    "utilisation_points",
    "__scoremon_eta",
    "score",
    "__scoremon_shortfall_0",
    "__scoremon_shortfall_1",
    "__scoremon_shortfall_2",
    "__scoremon_best_1",
    "__scoremon_pick_1",
    GREATEST(
      CASE
        WHEN "__scoremon_pick_1" = 0
        THEN CAST(0.0 AS DOUBLE)
        ELSE "__scoremon_shortfall_0"
      END,
      CASE
        WHEN "__scoremon_pick_1" = 1
        THEN CAST(0.0 AS DOUBLE)
        ELSE "__scoremon_shortfall_1"
      END,
      CASE
        WHEN "__scoremon_pick_1" = 2
        THEN CAST(0.0 AS DOUBLE)
        ELSE "__scoremon_shortfall_2"
      END
    ) AS "__scoremon_best_2"
  FROM "picked_1"
), "picked_2" AS (
  SELECT
    "application_id",
    "age_bin",
    "age_points",
    "region_bin",
    "region_points",
    "utilisation_bin",
    "utilisation_points",
    "__scoremon_eta",
    "score",
    "__scoremon_shortfall_0",
    "__scoremon_shortfall_1",
    "__scoremon_shortfall_2",
    "__scoremon_best_1",
    "__scoremon_pick_1",
    "__scoremon_best_2",
    CASE
      WHEN "__scoremon_best_2" <= CAST(0.0 AS DOUBLE)
      THEN NULL
      WHEN "__scoremon_shortfall_0" = "__scoremon_best_2" AND "__scoremon_pick_1" <> 0
      THEN 0
      WHEN "__scoremon_shortfall_1" = "__scoremon_best_2" AND "__scoremon_pick_1" <> 1
      THEN 1
      ELSE 2
    END AS "__scoremon_pick_2"
  FROM "best_2"
)
SELECT
  "application_id",
  "age_bin",
  "age_points",
  "region_bin",
  "region_points",
  "utilisation_bin",
  "utilisation_points",
  "score",
  CAST(1.0 AS DOUBLE) / (
    CAST(1.0 AS DOUBLE) + EXP(
      -(
        CASE
          WHEN "__scoremon_eta" > CAST(700.0 AS DOUBLE)
          THEN CAST(700.0 AS DOUBLE)
          WHEN "__scoremon_eta" < CAST(-700.0 AS DOUBLE)
          THEN CAST(-700.0 AS DOUBLE)
          ELSE "__scoremon_eta"
        END
      )
    )
  ) AS "pd",
  CASE
    WHEN "score" >= CAST(640.0 AS DOUBLE)
    THEN 'A'
    WHEN "score" >= CAST(600.0 AS DOUBLE)
    THEN 'B'
    ELSE 'C'
  END AS "grade",
  ['R1', 'R2', 'R3']["__scoremon_pick_1" + 1] AS "reason_1",
  ['R1', 'R2', 'R3']["__scoremon_pick_2" + 1] AS "reason_2",
  'small_test_model' AS "model_name",
  '3' AS "model_version",
  '1cd64850b6a4935e' AS "model_fingerprint"
FROM "picked_2"
