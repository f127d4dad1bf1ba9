-- Returns, per convention the user id was taken from (user_id_from), how many flattened OTLP
-- records there are, how many carry a session.id attribute and how many are entry spans (SERVER
-- or CONSUMER). Reads the Parquet file written by flatten_otlp_*.sql. Parameters: $path.
SELECT
    user_id_from,
    count(*) AS records,
    count(*) FILTER (WHERE map_extract_value(attributes, 'session.id') IS NOT NULL) AS with_session_attribute,
    count(*) FILTER (WHERE span_kind IN (2, 5)) AS entry_spans
FROM read_parquet($path)
GROUP BY user_id_from
ORDER BY user_id_from;
