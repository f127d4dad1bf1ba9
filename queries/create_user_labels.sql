-- Creates the users table: the label kept for each user key. With a key, the label is the
-- HMAC-SHA256 of the id (RFC 2104: H((K xor opad) || H((K xor ipad) || id))), so the raw id is
-- never stored; without one it is the id itself (never printed or exported by gapfinder).
-- Reads user_keys. Parameters: $inner_pad and $outer_pad (BLOBs, the padded key xor ipad/opad,
-- both NULL for no pseudonymization).
CREATE OR REPLACE TABLE users AS
SELECT
    user_key,
    CASE
        WHEN $inner_pad::BLOB IS NULL THEN user_id
        ELSE sha256($outer_pad::BLOB || unhex(sha256($inner_pad::BLOB || encode(user_id))))
    END AS user_label
FROM user_keys;
