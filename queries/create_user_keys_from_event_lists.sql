-- Creates the temporary table user_keys from user_event_lists: one integer key per user id,
-- numbered in id order, the same keys queries/create_user_keys.sql gives (both take the users
-- with at least one usable event). Parameters: none.
CREATE OR REPLACE TEMP TABLE user_keys AS
SELECT row_number() OVER (ORDER BY user_id)::INTEGER AS user_key, user_id
FROM user_event_lists;
