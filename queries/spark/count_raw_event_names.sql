-- Returns each distinct event name of the source (trimmed) with how many events carry it, for the
-- feature-key rules that run on the distinct names in DuckDB (queries/create_raw_event_names.sql
-- does the same on one machine). Reads the temporary view mapped_source. Parameters: none.
SELECT trim(event) AS raw, count(*) AS events
FROM mapped_source
WHERE event IS NOT NULL AND trim(event) <> ''
GROUP BY trim(event);
