-- The monitoring history tables scoremon creates (if missing) in the monitored database.
-- Generated from scoremon/monitor/history.py; regenerate with
--   python -m scoremon.monitor.history > sql/monitor_history.sql
-- Runs only ever add rows. status is ok, watch or alert; value is NULL when a figure
-- cannot be computed (no rows, no events). month is empty for a figure of the whole run
-- (rows_out_of_range: rows whose month is out of range, left out).

CREATE TABLE IF NOT EXISTS "scoremon_monitor_runs" (
  "run_id" TEXT NOT NULL,
  "run_at" TIMESTAMP NOT NULL,
  "model_name" TEXT NOT NULL,
  "model_version" TEXT NOT NULL,
  "model_fingerprint" TEXT NOT NULL,
  "as_of" DATE NOT NULL,
  "performance_window_months" INT NOT NULL,
  "source" TEXT NOT NULL,
  "baseline_source" TEXT NOT NULL,
  "thresholds" TEXT NOT NULL,
  "months" INT NOT NULL,
  "status" TEXT NOT NULL
);

CREATE TABLE IF NOT EXISTS "scoremon_monitor_metrics" (
  "run_id" TEXT NOT NULL,
  "month" TEXT NOT NULL,
  "family" TEXT NOT NULL,
  "metric" TEXT NOT NULL,
  "subject" TEXT NOT NULL,
  "value" DOUBLE,
  "status" TEXT
);
