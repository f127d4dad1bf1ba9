-- Creates the temporary table source_digest from the digest the Spark engine computed
-- (queries/spark/create_source_digest.sql), registered as engine_source_digest, with the columns
-- and types of queries/create_source_digest.sql (the time range back from microseconds since the
-- epoch to UTC timestamps), so the row counts and the event vocabulary are read from it as on
-- DuckDB. Parameters: none.
CREATE OR REPLACE TEMP TABLE source_digest AS
SELECT
    reason::VARCHAR AS reason,
    is_noise::BOOLEAN AS is_noise,
    event::VARCHAR AS event,
    outcome::VARCHAR AS outcome,
    app_version::VARCHAR AS app_version,
    platform::VARCHAR AS platform,
    row_count::BIGINT AS row_count,
    naive_ts_count::BIGINT AS naive_ts_count,
    make_timestamp(first_ts)::TIMESTAMPTZ AS first_ts,
    make_timestamp(last_ts)::TIMESTAMPTZ AS last_ts
FROM engine_source_digest;
