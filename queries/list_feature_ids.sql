-- Returns the features table (event_id, event) in id order, for another engine to join events to
-- their ids. Parameters: none.
SELECT event_id, event FROM features ORDER BY event_id;
