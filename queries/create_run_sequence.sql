-- Creates the sequence that numbers rows of the runs table. Parameters: none.
CREATE SEQUENCE IF NOT EXISTS run_ids START 1;
