-- Lists each distinct set of full paths that one or more users took ("signature", path ids in
-- order) with how many users took exactly that set: k-path users are counted once per signature,
-- weighted. Automated users' sessions count only with $include_automated.
-- Reads the temporary table user_paths (distinct pairs). Parameters: $include_automated (BOOLEAN).
SELECT signature, count(*)::BIGINT AS user_count
FROM (
    SELECT list_sort(list(path_id)) AS signature
    FROM user_paths
    WHERE $include_automated OR NOT is_automated
    GROUP BY user_key
)
GROUP BY signature;
