-- Creates the temporary table user_keys from session_event_lists: one integer key per user id with
-- at least one usable event, numbered in id order (as queries/create_user_keys_from_event_lists.sql
-- and queries/spark/create_user_keys.sql number them). Parameters: none.
CREATE OR REPLACE TEMP TABLE user_keys AS
SELECT row_number() OVER (ORDER BY user_id)::INTEGER AS user_key, user_id
FROM (SELECT DISTINCT user_id FROM session_event_lists);
