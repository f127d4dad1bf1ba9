-- Returns the field's event names taken by at least $min_users distinct users (names of rarer
-- events may identify someone, e.g. an email inside an event name), by event id.
-- Reads features, kpaths (k = 1: the code is the event id below the top 4 bits). Parameters: $min_users.
SELECT f.event
FROM features AS f
JOIN kpaths AS k ON k.k = 1 AND (k.code & 1152921504606846975)::INTEGER = f.event_id
WHERE f.event_id > 1 AND k.users >= $min_users
ORDER BY f.event_id;
