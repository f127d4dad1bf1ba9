-- Returns one integer key per distinct user id, numbered in id order (UTF-8 byte order, as in
-- DuckDB) so that keys equal those of queries/create_user_keys_from_event_lists.sql. Reads the temporary view
-- mapped_source. The numbering is one global sort of the distinct ids (not of the events).
-- Parameters: :noise_events (ARRAY<STRING>).
SELECT CAST(row_number() OVER (ORDER BY user_id) AS INT) AS user_key, user_id
FROM (
    SELECT DISTINCT trim(user_id) AS user_id
    FROM mapped_source
    WHERE user_id IS NOT NULL AND trim(user_id) <> '' AND ts IS NOT NULL
      AND event IS NOT NULL AND trim(event) <> ''
      AND NOT array_contains(CAST(:noise_events AS ARRAY<STRING>), trim(event))
);
