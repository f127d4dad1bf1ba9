-- Returns one row describing the sessions: counts of users, sessions and events in the usage
-- profile (automated traffic apart), session length median / 95th percentile / maximum, sessions
-- cut at the cap, sessions with an error, and the automated users, sessions and events.
-- Reads sessions. Parameters: none.
SELECT
    count(DISTINCT user_key) FILTER (WHERE NOT is_automated) AS user_count,
    count(*) FILTER (WHERE NOT is_automated) AS session_count,
    coalesce(sum(event_count) FILTER (WHERE NOT is_automated), 0)::BIGINT AS event_count,
    quantile_disc(event_count, 0.5) FILTER (WHERE NOT is_automated) AS length_median,
    quantile_disc(event_count, 0.95) FILTER (WHERE NOT is_automated) AS length_p95,
    max(event_count) FILTER (WHERE NOT is_automated) AS length_max,
    count(*) FILTER (WHERE is_truncated AND NOT is_automated) AS truncated_count,
    count(*) FILTER (WHERE error_count > 0 AND NOT is_automated) AS error_session_count,
    count(DISTINCT user_key) FILTER (WHERE is_automated) AS automated_user_count,
    count(*) FILTER (WHERE is_automated) AS automated_session_count,
    coalesce(sum(event_count) FILTER (WHERE is_automated), 0)::BIGINT AS automated_event_count
FROM sessions;
