-- Creates the temporary table user_keys: one integer key per distinct user id, numbered in id
-- order so that keys are the same for the same input. Reads usable_events. Parameters: none.
CREATE OR REPLACE TEMP TABLE user_keys AS
SELECT row_number() OVER (ORDER BY user_id)::INTEGER AS user_key, user_id
FROM (SELECT DISTINCT user_id FROM usable_events);
