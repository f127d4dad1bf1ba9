-- Creates the feature_usage table: per event id, its occurrences, sessions containing it and
-- distinct users. Reads sessions. Parameters: $include_automated (BOOLEAN).
CREATE OR REPLACE TABLE feature_usage AS
WITH occurrences AS (
    SELECT unnest(path) AS event_id, session_key, user_key
    FROM sessions
    WHERE $include_automated OR NOT is_automated
)
SELECT
    event_id,
    count(*)::BIGINT AS occurrences,
    count(DISTINCT session_key)::BIGINT AS sessions,
    count(DISTINCT user_key)::BIGINT AS users
FROM occurrences
GROUP BY event_id;
