-- Returns the folder DuckDB spills to (its temp_directory setting), beside which large
-- intermediate files are staged. Parameters: none.
SELECT current_setting('temp_directory') AS spill_folder;
