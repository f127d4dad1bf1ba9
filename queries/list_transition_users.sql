-- Returns every transition (k = 2 path) as source and target event ids with its distinct users,
-- for naming only transitions above the privacy floor (the ids unpacked from the code, $bits bits
-- each). Reads kpaths. Parameters: $bits (1..30).
SELECT
    ((code >> $bits::UBIGINT) & ((1::UBIGINT << $bits::UBIGINT) - 1))::INTEGER AS a,
    (code & ((1::UBIGINT << $bits::UBIGINT) - 1))::INTEGER AS b,
    users
FROM kpaths
WHERE k = 2
ORDER BY a, b;
