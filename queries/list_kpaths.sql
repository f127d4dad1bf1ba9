-- Returns contiguous paths of length $min_k..$max_k (k = 2 are transitions) with at least
-- $min_users distinct users, most sessions first, as lists of event names (unpacked from the code:
-- $bits bits an event id, the first state highest), with their share of $total_sessions.
-- Reads kpaths. Parameters: $names (event names indexed by event id + 1), $bits (1..30),
-- $min_k, $max_k, $min_users, $min_sessions (support floor), $total_sessions,
-- $limit (NULL for all). Rows in the registered view hidden_kpath_codes (code) are left out:
-- gapfinder.disclosure's complementary suppression.
SELECT
    k,
    list_transform(
        range(k::BIGINT),
        lambda j: $names[((code >> (((k - 1 - j) * $bits)::UBIGINT)) & ((1::UBIGINT << $bits::UBIGINT) - 1))::BIGINT + 1]
    ) AS path,
    occurrences,
    sessions,
    users,
    sessions / greatest($total_sessions, 1)::DOUBLE AS share
FROM kpaths
WHERE k BETWEEN $min_k AND $max_k AND users >= $min_users AND sessions >= $min_sessions
    AND code NOT IN (SELECT code FROM hidden_kpath_codes)
ORDER BY sessions DESC, occurrences DESC, path
LIMIT $limit;
