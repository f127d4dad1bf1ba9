-- Appends one completed stage to runs.
-- Parameters: $stage, $started_at, $finished_at, $seconds, $package_version, $inputs (JSON list),
-- $parameters (JSON object), $row_counts (JSON object).
INSERT INTO runs (stage, started_at, finished_at, seconds, package_version, inputs, parameters, row_counts)
VALUES ($stage, $started_at, $finished_at, $seconds, $package_version, $inputs, $parameters, $row_counts);
