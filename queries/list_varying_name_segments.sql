-- Returns the three segment positions (from 1) of the event names, split at $delimiter, whose
-- values vary most, with how many distinct values each takes. Only names holding the delimiter
-- count. Reads raw_event_names. Parameters: $delimiter.
WITH split AS (
    SELECT string_split(name, $delimiter) AS parts
    FROM raw_event_names
    WHERE contains(name, $delimiter)
),
segments AS (
    SELECT unnest(generate_series(1, len(parts))) AS position, unnest(parts) AS segment
    FROM split
)
SELECT position, count(DISTINCT segment) AS distinct_values
FROM segments
GROUP BY position
ORDER BY distinct_values DESC, position
LIMIT 3;
