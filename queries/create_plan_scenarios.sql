-- Creates the plan_scenarios table from the registered Arrow table plan_frame: one row per chosen
-- scenario (scenario_no in the order chosen, its path of event names, every planned field as JSON).
-- Reads plan_frame. Parameters: none.
CREATE OR REPLACE TABLE plan_scenarios AS
SELECT scenario_no, path, details
FROM plan_frame
ORDER BY scenario_no;
