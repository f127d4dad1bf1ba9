-- Creates the temporary table raw_event_names: each distinct event name of the source (trimmed)
-- with the name the rewrite rules will turn it into (at first itself) and how many events carry it.
-- Reads the temporary view mapped_source_raw. Parameters: none.
CREATE OR REPLACE TEMP TABLE raw_event_names AS
SELECT trim(event) AS raw, trim(event) AS name, count(*) AS events
FROM mapped_source_raw
WHERE event IS NOT NULL AND trim(event) <> ''
GROUP BY trim(event);
