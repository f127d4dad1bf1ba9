-- Creates the temporary macro otlp_attributes(pairs): an OTLP KeyValue list as a map of text,
-- keeping the first value of a repeated key and dropping pairs with no key (needs the macros of
-- create_otlp_text_macro.sql and create_otlp_unique_map_macro.sql). Parameters: none.
CREATE OR REPLACE TEMP MACRO otlp_attributes(pairs) AS otlp_first_of_each_key(list_transform(
    list_filter(coalesce(pairs, []), lambda a: a.key IS NOT NULL),
    lambda a: {'key': a.key, 'value': otlp_text(a.value)}
));
