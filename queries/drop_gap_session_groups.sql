-- Drops the temporary table gap_session_groups once the gap evidence is read. Parameters: none.
DROP TABLE IF EXISTS temp.gap_session_groups;
