-- Creates the temporary table gap_path_masks: for the candidate gaps $offset .. $offset + $width - 1
-- of the registered Arrow table gap_paths (candidate, path_id), each distinct path's mask of the
-- candidates it holds: bit c - $offset for candidate c, as two 64-bit words (low, high).
-- Parameters: $offset (BIGINT), $width (1..128).
CREATE OR REPLACE TEMP TABLE gap_path_masks AS
SELECT
    path_id,
    bit_or(CASE WHEN candidate - $offset < 64 THEN 1::UBIGINT << (candidate - $offset)::UBIGINT ELSE 0 END) AS low,
    bit_or(CASE WHEN candidate - $offset >= 64 THEN 1::UBIGINT << (candidate - $offset - 64)::UBIGINT ELSE 0 END)
        AS high
FROM gap_paths
WHERE candidate >= $offset AND candidate < $offset + $width
GROUP BY path_id;
