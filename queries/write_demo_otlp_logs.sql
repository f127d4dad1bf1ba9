-- Writes the demo's field events of the Parquet files $files as OpenTelemetry logs to $path:
-- gzip-compressed OTLP/JSON, one ExportLogsServiceRequest per line (the shape the Collector's file
-- exporter writes), 500 log records per request, one resource per app version and platform.
-- Each record: timeUnixNano (nanoseconds as a decimal string, protobuf's JSON mapping of fixed64),
-- eventName, severity INFO (9) or ERROR (17) from the outcome, the member as the user.id attribute.
-- Parameters: $files, $path.
COPY (
    WITH events AS (
        SELECT
            *,
            row_number() OVER (PARTITION BY app_version, platform ORDER BY ts, user_id, event) AS n
        FROM read_parquet($files)
    ),
    batched AS (
        SELECT
            app_version,
            platform,
            (n - 1) // 500 AS batch,
            list({
                'timeUnixNano': CAST(epoch_ns(ts) AS VARCHAR),
                'observedTimeUnixNano': CAST(epoch_ns(ts) AS VARCHAR),
                'severityNumber': CASE WHEN outcome = 'error' THEN 17 ELSE 9 END,
                'severityText': CASE WHEN outcome = 'error' THEN 'ERROR' ELSE 'INFO' END,
                'eventName': CAST(event AS VARCHAR),
                'attributes': [{'key': 'user.id', 'value': {'stringValue': user_id}}]
            } ORDER BY n) AS records
        FROM events
        GROUP BY ALL
    )
    SELECT [{
        'resource': {'attributes': [
            {'key': 'service.name', 'value': {'stringValue': 'toolshed-app'}},
            {'key': 'service.version', 'value': {'stringValue': CAST(app_version AS VARCHAR)}},
            {'key': 'os.type', 'value': {'stringValue': CAST(platform AS VARCHAR)}}
        ]},
        'scopeLogs': [{'scope': {'name': 'toolshed.telemetry', 'version': '1.0.0'}, 'logRecords': records}]
    }] AS resourceLogs
    FROM batched
    ORDER BY app_version, platform, batch
) TO $path (FORMAT json, COMPRESSION gzip);
