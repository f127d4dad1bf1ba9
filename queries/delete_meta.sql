-- Deletes one key of the meta table (no error when it is absent). Parameters: $key.
DELETE FROM meta WHERE key = $key;
