-- Returns one row describing the sessions: counts of users, sessions and events in the usage
-- profile (automated traffic apart), session length median / 95th percentile / maximum, sessions
-- cut at the cap, sessions with an error, and the automated users, sessions and events.
-- Users are counted from one group by (user, automated), not two distinct counts over the
-- sessions. Reads sessions. Parameters: none.
WITH per_user AS (
    SELECT
        user_key,
        is_automated,
        count(*) AS session_count,
        sum(event_count) AS event_count,
        count(*) FILTER (WHERE is_truncated) AS truncated_count,
        count(*) FILTER (WHERE error_count > 0) AS error_session_count
    FROM sessions
    GROUP BY user_key, is_automated
),
lengths AS (
    SELECT
        quantile_disc(event_count, 0.5) AS length_median,
        quantile_disc(event_count, 0.95) AS length_p95,
        max(event_count) AS length_max
    FROM sessions
    WHERE NOT is_automated
)
SELECT
    count(*) FILTER (WHERE NOT is_automated) AS user_count,
    coalesce(sum(session_count) FILTER (WHERE NOT is_automated), 0)::BIGINT AS session_count,
    coalesce(sum(event_count) FILTER (WHERE NOT is_automated), 0)::BIGINT AS event_count,
    any_value(l.length_median) AS length_median,
    any_value(l.length_p95) AS length_p95,
    any_value(l.length_max) AS length_max,
    coalesce(sum(truncated_count) FILTER (WHERE NOT is_automated), 0)::BIGINT AS truncated_count,
    coalesce(sum(error_session_count) FILTER (WHERE NOT is_automated), 0)::BIGINT AS error_session_count,
    count(*) FILTER (WHERE is_automated) AS automated_user_count,
    coalesce(sum(session_count) FILTER (WHERE is_automated), 0)::BIGINT AS automated_session_count,
    coalesce(sum(event_count) FILTER (WHERE is_automated), 0)::BIGINT AS automated_event_count
FROM per_user, lengths AS l;
