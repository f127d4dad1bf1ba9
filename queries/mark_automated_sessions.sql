-- Marks every session of a user in automated_users as automated (kept, but apart from the
-- usage profile). Reads automated_users. Parameters: none.
UPDATE sessions SET is_automated = true
WHERE user_key IN (SELECT user_key FROM automated_users);
