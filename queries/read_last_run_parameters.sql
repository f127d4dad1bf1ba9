-- Returns the parameters (JSON text) of the latest completed run of stage $stage, or no row.
-- Reads runs. Parameters: $stage.
SELECT parameters
FROM runs
WHERE stage = $stage
ORDER BY run_id DESC
LIMIT 1;
