-- Creates the automated_users table: users whose behaviour is far outside everyone else's, one
-- row per statistic that singled them out. Statistics per user: sessions, events per session and
-- events per active minute. A user is flagged on a statistic when all three hold:
--   * the modified z-score of its logarithm, 0.6745 (x - median) / MAD (Iglewicz & Hoaglin, "How
--     to Detect and Handle Outliers", 1993), exceeds $min_robust_z (a zero MAD counts as exceeding);
--   * the value is at least $min_ratio times the median user's;
--   * the user has at least $min_events events in all.
-- Active minutes are summed in whole microseconds, so the value does not depend on summation order.
-- Reads raw_sessions. Parameters: $min_robust_z (DOUBLE), $min_ratio (DOUBLE), $min_events (INTEGER).
CREATE OR REPLACE TABLE automated_users AS
WITH per_user AS (
    SELECT
        user_key,
        count(*)::DOUBLE AS session_count,
        sum(event_count)::DOUBLE AS event_count,
        sum(event_count)::DOUBLE / count(*) AS events_per_session,
        sum(event_count)::DOUBLE
            / greatest(sum(epoch_us(ended_at) - epoch_us(started_at))::DOUBLE / 60e6, 1.0) AS events_per_minute
    FROM raw_sessions
    GROUP BY user_key
),
long_form AS (
    SELECT user_key, event_count, 'sessions' AS statistic, session_count AS value FROM per_user
    UNION ALL
    SELECT user_key, event_count, 'events per session', events_per_session FROM per_user
    UNION ALL
    SELECT user_key, event_count, 'events per minute', events_per_minute FROM per_user
),
typical AS (
    -- one row per statistic: plain aggregates, not a window over every user
    SELECT
        statistic,
        median(value) AS typical_value,
        median(ln(value)) AS median_log,
        mad(ln(value)) AS mad_log
    FROM long_form
    GROUP BY statistic
),
scored AS (
    SELECT l.*, t.typical_value, t.median_log, t.mad_log
    FROM long_form AS l
    JOIN typical AS t USING (statistic)
)
SELECT
    user_key,
    statistic,
    value,
    typical_value,
    CASE WHEN mad_log > 0 THEN 0.6745 * (ln(value) - median_log) / mad_log END AS robust_z,
    event_count::BIGINT AS event_count
FROM scored
WHERE event_count >= $min_events
  AND value >= $min_ratio * typical_value
  AND (mad_log = 0 OR 0.6745 * (ln(value) - median_log) / mad_log > $min_robust_z)
ORDER BY user_key, statistic;
