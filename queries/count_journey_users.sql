-- Returns, for each journey of the registered Arrow frame journey_paths (journey_no, path_id: the
-- distinct paths the journey occurs in), the distinct users of the sessions that took one of those
-- paths, over the sessions that count for the usage profile. Journeys without a counted user are
-- left out (0 users). Reads sessions. Parameters: $include_automated (BOOLEAN).
SELECT j.journey_no, count(DISTINCT s.user_key)::BIGINT AS users
FROM sessions AS s
JOIN journey_paths AS j USING (path_id)
WHERE $include_automated OR NOT s.is_automated
GROUP BY j.journey_no
ORDER BY j.journey_no;
