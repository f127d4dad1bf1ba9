-- Returns, per journey family of the registered Arrow table family_of_path (path_id, family), its
-- sessions and distinct users over the sessions that count for the usage profile.
-- Reads sessions. Parameters: $include_automated (BOOLEAN).
SELECT f.family, count(*)::BIGINT AS sessions, count(DISTINCT s.user_key)::BIGINT AS users
FROM sessions AS s
JOIN family_of_path AS f ON f.path_id = s.path_id
WHERE $include_automated OR NOT s.is_automated
GROUP BY f.family
ORDER BY f.family;
