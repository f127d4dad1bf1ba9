-- Returns one row per OTLP span of the virtual table otlp_documents (ExportTraceServiceRequest
-- documents read with an explicit schema, every scalar as text), as field telemetry of back-end
-- journeys, with gapfinder's canonical columns filled from the OpenTelemetry semantic conventions:
--   ts          startTimeUnixNano, cut to microseconds; event the span name;
--   user_id     user.id, enduser.pseudo.id or enduser.id (user_id_from says which; where none is
--               present: session.id, then the trace id);
--   session_id  the session.id attribute, else the trace id;
--   app_version service.version, platform os.type or device.model.identifier (resource attributes);
--   outcome     'error' for status code ERROR (2) or an exception.type attribute, else 'ok'.
-- span_kind is the SpanKind number (2 SERVER, 5 CONSUMER: the entry points of a request).
-- Uses the macros of create_otlp_*_macro.sql. Parameters: none.
WITH resources AS (
    SELECT unnest(resourceSpans) AS r FROM otlp_documents
),
scopes AS (
    SELECT r.resource.attributes AS resource_pairs, unnest(r.scopeSpans) AS s FROM resources
),
records AS (
    SELECT resource_pairs, s.scope.name AS scope_name, unnest(s.spans) AS l FROM scopes
),
texted AS (
    SELECT
        otlp_attributes(resource_pairs) AS resource,
        otlp_attributes(l.attributes) AS attributes,
        scope_name,
        l.startTimeUnixNano AS time_text,
        l.endTimeUnixNano AS end_text,
        l.name AS span_name,
        l.kind AS kind_raw,
        l.status.code AS status_raw,
        l.traceId AS trace_id,
        l.spanId AS span_id,
        l.parentSpanId AS parent_span_id
    FROM records
),
mapped AS (
    SELECT
        *,
        nullif(try_cast(time_text AS BIGINT), 0) AS time_unix_nano,
        nullif(try_cast(end_text AS BIGINT), 0) AS end_unix_nano,
        coalesce(
            try_cast(kind_raw AS INTEGER),
            list_position(['SPAN_KIND_INTERNAL', 'SPAN_KIND_SERVER', 'SPAN_KIND_CLIENT', 'SPAN_KIND_PRODUCER',
                'SPAN_KIND_CONSUMER'], upper(kind_raw)),
            0
        ) AS span_kind,
        coalesce(
            try_cast(status_raw AS INTEGER),
            list_position(['STATUS_CODE_OK', 'STATUS_CODE_ERROR'], upper(status_raw)),
            0
        ) AS status_code
    FROM texted
)
SELECT
    time_unix_nano,
    CASE WHEN time_unix_nano IS NOT NULL THEN make_timestamp(time_unix_nano // 1000)::TIMESTAMPTZ END AS ts,
    (time_text IS NOT NULL) AS has_time,
    nullif(span_name, '') AS event,
    coalesce(
        map_extract_value(attributes, 'user.id'),
        map_extract_value(attributes, 'enduser.pseudo.id'),
        map_extract_value(attributes, 'enduser.id'),
        map_extract_value(attributes, 'session.id'),
        nullif(trace_id, '')
    ) AS user_id,
    CASE
        WHEN map_extract_value(attributes, 'user.id') IS NOT NULL THEN 'user.id'
        WHEN map_extract_value(attributes, 'enduser.pseudo.id') IS NOT NULL THEN 'enduser.pseudo.id'
        WHEN map_extract_value(attributes, 'enduser.id') IS NOT NULL THEN 'enduser.id'
        WHEN map_extract_value(attributes, 'session.id') IS NOT NULL THEN 'session.id'
        WHEN nullif(trace_id, '') IS NOT NULL THEN 'traceId'
    END AS user_id_from,
    coalesce(map_extract_value(attributes, 'session.id'), nullif(trace_id, '')) AS session_id,
    map_extract_value(resource, 'service.version') AS app_version,
    coalesce(map_extract_value(resource, 'os.type'), map_extract_value(resource, 'device.model.identifier'))
        AS platform,
    CASE
        WHEN status_code = 2 OR map_extract_value(attributes, 'exception.type') IS NOT NULL THEN 'error'
        ELSE 'ok'
    END AS outcome,
    span_kind,
    status_code,
    end_unix_nano,
    trace_id,
    span_id,
    parent_span_id,
    scope_name,
    attributes,
    resource
FROM mapped;
