-- Returns one row: the list of event names ordered by event id (START = 0, END = 1, then
-- features), used to turn id paths into names. Reads features. Parameters: none.
SELECT list(event ORDER BY event_id) AS names FROM features;
