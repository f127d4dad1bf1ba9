-- Returns every transition (k = 2 path) as source name, target name and occurrences: the edges of
-- the usage model (the two event ids unpacked from the code, $bits bits each). Reads kpaths.
-- Parameters: $names (event names indexed by event id + 1), $bits (1..30).
SELECT
    $names[((code >> $bits::UBIGINT) & ((1::UBIGINT << $bits::UBIGINT) - 1))::BIGINT + 1] AS source,
    $names[(code & ((1::UBIGINT << $bits::UBIGINT) - 1))::BIGINT + 1] AS target,
    occurrences
FROM kpaths
WHERE k = 2
ORDER BY source, target;
