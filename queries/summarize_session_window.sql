-- Returns one row: the first and last session start and the session count over the sessions that
-- count for the profile. Reads sessions. Parameters: $include_automated (BOOLEAN).
SELECT min(started_at) AS first_start, max(started_at) AS last_start, count(*)::BIGINT AS sessions
FROM sessions
WHERE $include_automated OR NOT is_automated;
