-- Returns one row: whether a table of that name exists in the main schema. Parameters: $name.
SELECT count(*) > 0 FROM information_schema.tables WHERE table_schema = 'main' AND table_name = $name;
