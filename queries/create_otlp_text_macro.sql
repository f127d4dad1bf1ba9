-- Creates the temporary macro otlp_text(value): an OTLP AnyValue (read with every scalar as text)
-- as text, arrays and maps as JSON. Used by flatten_otlp_*.sql. Parameters: none.
CREATE OR REPLACE TEMP MACRO otlp_text(v) AS coalesce(
    v.stringValue, CAST(v.boolValue AS VARCHAR), v.intValue, v.doubleValue, v.bytesValue,
    CAST(v.arrayValue AS VARCHAR), CAST(v.kvlistValue AS VARCHAR)
);
