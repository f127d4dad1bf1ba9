-- Sets one key of the meta table. Parameters: $key, $value.
INSERT OR REPLACE INTO meta (key, value) VALUES ($key, $value);
