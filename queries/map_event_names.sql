-- Returns every row of the virtual table mapped_source_raw with its event renamed where a rewrite
-- rule changed the name (event_name_map); other rows keep their event. Parameters: none.
SELECT s.* REPLACE (CASE WHEN m.raw IS NULL THEN s.event ELSE m.name END AS event)
FROM mapped_source_raw AS s
LEFT JOIN event_name_map AS m ON m.raw = trim(s.event);
