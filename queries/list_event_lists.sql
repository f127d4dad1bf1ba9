-- Returns the lists of event_lists whose row id is in [$first_row, $end_row): list_row,
-- session_id ('' unless lists are per session id) and events (the sorted HUGEINT keys), for the
-- session cutter (gapfinder/session_cuts.py). Reads event_lists.
-- Parameters: $first_row, $end_row (BIGINT).
SELECT rowid AS list_row, session_id, events
FROM event_lists
WHERE rowid >= $first_row AND rowid < $end_row;
