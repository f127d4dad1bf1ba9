-- Counts the stored suite's steps by how their names resolved to field events: (resolved_by,
-- step_count) with resolved_by one of exact, normalized, alias, unmapped. Reads suite_steps.
-- Parameters: none.
SELECT resolved_by, count(*) AS step_count
FROM suite_steps
GROUP BY resolved_by
ORDER BY resolved_by;
