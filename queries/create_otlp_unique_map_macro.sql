-- Creates the temporary macro otlp_first_of_each_key(entries): a map from a list of {key, value}
-- structs, keeping the first value of a repeated key. Used by create_otlp_attributes_macro.sql.
-- Parameters: none.
CREATE OR REPLACE TEMP MACRO otlp_first_of_each_key(entries) AS map_from_entries(list_filter(
    entries, lambda a, i: list_position(list_transform(entries, lambda b: b.key), a.key) = i
));
