-- Drops the temporary table gap_path_masks once the users of its candidates are counted.
-- Parameters: none.
DROP TABLE IF EXISTS temp.gap_path_masks;
