-- Returns the label kept for each user key, as queries/create_user_labels.sql: with a key the
-- HMAC-SHA256 of the id (RFC 2104), without one the id itself. Reads the temporary view user_keys.
-- Parameters: :inner_pad and :outer_pad (BINARY, the padded key xor ipad/opad; both NULL for no
-- pseudonymization).
SELECT
    user_key,
    CASE
        WHEN CAST(:inner_pad AS BINARY) IS NULL THEN user_id
        ELSE sha2(concat(CAST(:outer_pad AS BINARY),
                         unhex(sha2(concat(CAST(:inner_pad AS BINARY), encode(user_id, 'UTF-8')), 256))), 256)
    END AS user_label
FROM user_keys;
