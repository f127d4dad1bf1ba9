-- Creates the temporary table user_keys from event_lists: one integer key per user id with at
-- least one usable event, numbered in id order (queries/spark/create_user_keys.sql numbers them
-- the same way). Parameters: none.
CREATE OR REPLACE TEMP TABLE user_keys AS
SELECT row_number() OVER (ORDER BY user_id)::INTEGER AS user_key, user_id
FROM (SELECT DISTINCT user_id FROM event_lists);
