-- Creates the temporary macros the OTLP flattening queries share: otlp_text(value) turns an AnyValue
-- (read with every scalar as text) into text, arrays and maps as JSON; otlp_attributes(pairs) turns
-- a KeyValue list into a map of text, keeping the first value of a repeated key and dropping pairs
-- with no key. Parameters: none.
CREATE OR REPLACE TEMP MACRO otlp_text(v) AS coalesce(
    v.stringValue, CAST(v.boolValue AS VARCHAR), v.intValue, v.doubleValue, v.bytesValue,
    CAST(v.arrayValue AS VARCHAR), CAST(v.kvlistValue AS VARCHAR)
);
CREATE OR REPLACE TEMP MACRO otlp_first_of_each_key(entries) AS map_from_entries(list_filter(
    entries, lambda a, i: list_position(list_transform(entries, lambda b: b.key), a.key) = i
));
CREATE OR REPLACE TEMP MACRO otlp_attributes(pairs) AS otlp_first_of_each_key(list_transform(
    list_filter(coalesce(pairs, []), lambda a: a.key IS NOT NULL),
    lambda a: {'key': a.key, 'value': otlp_text(a.value)}
));
