-- Returns one row per OTLP log record of the virtual table otlp_documents (ExportLogsServiceRequest
-- documents read with an explicit schema, every scalar as text), with gapfinder's canonical columns
-- filled from the OpenTelemetry semantic conventions:
--   ts          timeUnixNano, or observedTimeUnixNano where it is absent or 0, cut to microseconds;
--   event       eventName, else the event.name attribute;
--   user_id     user.id, enduser.pseudo.id or enduser.id (user_id_from says which; where none is
--               present: session.id, then the trace id, then the resource's service.instance.id);
--   session_id  the session.id attribute; app_version service.version, platform os.type or
--               device.model.identifier (resource attributes);
--   outcome     'error' for severityNumber 17 (ERROR) or more or an exception.type attribute,
--               'ok' for another known severity, else severityText.
-- Attributes and resource attributes are kept as maps of text (first value of a repeated key).
-- Uses the macros of create_otlp_*_macro.sql. Parameters: none.
WITH resources AS (
    SELECT unnest(resourceLogs) AS r FROM otlp_documents
),
scopes AS (
    SELECT r.resource.attributes AS resource_pairs, unnest(r.scopeLogs) AS s FROM resources
),
records AS (
    SELECT resource_pairs, s.scope.name AS scope_name, unnest(s.logRecords) AS l FROM scopes
),
texted AS (
    SELECT
        otlp_attributes(resource_pairs) AS resource,
        otlp_attributes(l.attributes) AS attributes,
        scope_name,
        l.timeUnixNano AS time_text,
        l.observedTimeUnixNano AS observed_text,
        l.severityNumber AS severity_raw,
        l.severityText AS severity_text,
        l.eventName AS event_name,
        otlp_text(l.body) AS body,
        l.traceId AS trace_id,
        l.spanId AS span_id
    FROM records
),
timed AS (
    SELECT
        *,
        coalesce(
            nullif(try_cast(time_text AS BIGINT), 0), nullif(try_cast(observed_text AS BIGINT), 0)
        ) AS time_unix_nano,
        coalesce(
            try_cast(severity_raw AS INTEGER),
            nullif(list_position([
                'SEVERITY_NUMBER_TRACE', 'SEVERITY_NUMBER_TRACE2', 'SEVERITY_NUMBER_TRACE3', 'SEVERITY_NUMBER_TRACE4',
                'SEVERITY_NUMBER_DEBUG', 'SEVERITY_NUMBER_DEBUG2', 'SEVERITY_NUMBER_DEBUG3', 'SEVERITY_NUMBER_DEBUG4',
                'SEVERITY_NUMBER_INFO', 'SEVERITY_NUMBER_INFO2', 'SEVERITY_NUMBER_INFO3', 'SEVERITY_NUMBER_INFO4',
                'SEVERITY_NUMBER_WARN', 'SEVERITY_NUMBER_WARN2', 'SEVERITY_NUMBER_WARN3', 'SEVERITY_NUMBER_WARN4',
                'SEVERITY_NUMBER_ERROR', 'SEVERITY_NUMBER_ERROR2', 'SEVERITY_NUMBER_ERROR3', 'SEVERITY_NUMBER_ERROR4',
                'SEVERITY_NUMBER_FATAL', 'SEVERITY_NUMBER_FATAL2', 'SEVERITY_NUMBER_FATAL3', 'SEVERITY_NUMBER_FATAL4'
            ], upper(severity_raw)), 0)
        ) AS severity_number
    FROM texted
)
SELECT
    time_unix_nano,
    CASE WHEN time_unix_nano IS NOT NULL THEN make_timestamp(time_unix_nano // 1000)::TIMESTAMPTZ END AS ts,
    (time_text IS NOT NULL OR observed_text IS NOT NULL) AS has_time,
    coalesce(nullif(event_name, ''), map_extract_value(attributes, 'event.name')) AS event,
    coalesce(
        map_extract_value(attributes, 'user.id'),
        map_extract_value(attributes, 'enduser.pseudo.id'),
        map_extract_value(attributes, 'enduser.id'),
        map_extract_value(attributes, 'session.id'),
        nullif(trace_id, ''),
        map_extract_value(resource, 'service.instance.id')
    ) AS user_id,
    CASE
        WHEN map_extract_value(attributes, 'user.id') IS NOT NULL THEN 'user.id'
        WHEN map_extract_value(attributes, 'enduser.pseudo.id') IS NOT NULL THEN 'enduser.pseudo.id'
        WHEN map_extract_value(attributes, 'enduser.id') IS NOT NULL THEN 'enduser.id'
        WHEN map_extract_value(attributes, 'session.id') IS NOT NULL THEN 'session.id'
        WHEN nullif(trace_id, '') IS NOT NULL THEN 'traceId'
        WHEN map_extract_value(resource, 'service.instance.id') IS NOT NULL THEN 'service.instance.id'
    END AS user_id_from,
    map_extract_value(attributes, 'session.id') AS session_id,
    map_extract_value(resource, 'service.version') AS app_version,
    coalesce(map_extract_value(resource, 'os.type'), map_extract_value(resource, 'device.model.identifier'))
        AS platform,
    CASE
        WHEN severity_number >= 17 OR map_extract_value(attributes, 'exception.type') IS NOT NULL THEN 'error'
        WHEN severity_number BETWEEN 1 AND 16 THEN 'ok'
        ELSE severity_text
    END AS outcome,
    NULL::INTEGER AS span_kind,
    severity_number,
    severity_text,
    body,
    trace_id,
    span_id,
    scope_name,
    attributes,
    resource
FROM timed;
