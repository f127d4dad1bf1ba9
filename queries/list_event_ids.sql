-- Returns every field event name with its id (START = 0 and END = 1 included).
-- Reads features. Parameters: none.
SELECT event, event_id
FROM features
ORDER BY event_id;
