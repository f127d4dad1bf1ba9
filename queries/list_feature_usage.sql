-- Returns features with their occurrences, sessions containing them, distinct users and share of
-- $total_sessions, most occurrences first; features under $min_users users are left out.
-- Reads kpaths (k = 1: the code is the event id below the top 4 bits), features. Parameters: $min_users, $min_sessions (support floor), $total_sessions,
-- $limit (NULL for all). Rows in the registered view hidden_kpath_codes (code) are left out:
-- gapfinder.disclosure's complementary suppression.
SELECT
    f.event,
    k.occurrences,
    k.sessions,
    k.users,
    k.sessions / greatest($total_sessions, 1)::DOUBLE AS share
FROM kpaths AS k
JOIN features AS f ON f.event_id = (k.code & 1152921504606846975)::INTEGER
WHERE k.k = 1 AND k.users >= $min_users AND k.sessions >= $min_sessions
    AND k.code NOT IN (SELECT code FROM hidden_kpath_codes)
ORDER BY k.occurrences DESC, f.event
LIMIT $limit;
