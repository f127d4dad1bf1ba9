-- Returns the user key of every list of event_lists by the list's row id (list_row), so the
-- session cutter (gapfinder/session_cuts.py) reads the lists in ranges of row ids without a join.
-- Reads event_lists, user_keys. Parameters: none.
SELECT e.rowid AS list_row, u.user_key
FROM event_lists AS e
JOIN user_keys AS u USING (user_id);
