-- Creates the meta table: key/value facts about the workspace, such as its schema version.
-- Parameters: none.
CREATE TABLE IF NOT EXISTS meta (key VARCHAR PRIMARY KEY, value VARCHAR NOT NULL);
