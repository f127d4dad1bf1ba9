-- Returns the latest completed run_id of each of the stages in $stages (NULL for a stage never run), in a list in
-- the order of $stages: the version of what those stages wrote, for values kept in memory beside the workspace.
-- Reads runs. Parameters: $stages (a list of stage names).
SELECT list((SELECT max(run_id) FROM runs WHERE stage = wanted.stage) ORDER BY wanted.position) AS run_ids
FROM (SELECT unnest($stages) AS stage, generate_subscripts($stages, 1) AS position) AS wanted;
