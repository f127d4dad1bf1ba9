-- Creates the runs table: one row per completed stage (inputs, parameters, version, counts).
-- Parameters: none.
CREATE TABLE IF NOT EXISTS runs (
    run_id          BIGINT PRIMARY KEY DEFAULT nextval('run_ids'),
    stage           VARCHAR NOT NULL,
    started_at      TIMESTAMPTZ NOT NULL,
    finished_at     TIMESTAMPTZ NOT NULL,
    seconds         DOUBLE NOT NULL,
    package_version VARCHAR NOT NULL,
    inputs          VARCHAR NOT NULL,
    parameters      VARCHAR NOT NULL,
    row_counts      VARCHAR NOT NULL
);
