-- Returns one row: whether a temporary table of that name exists in this connection.
-- Parameters: $name.
SELECT count(*) > 0 FROM duckdb_tables() WHERE temporary AND table_name = $name;
