-- Returns DuckDB's memory limit in force (its memory_limit setting, e.g. '3.0 GiB'), to restore it
-- after the buffer pool was emptied. Parameters: none.
SELECT current_setting('memory_limit') AS memory_limit;
