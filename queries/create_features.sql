-- Creates the features table: the event dictionary. START is 0 and END is 1; real events follow
-- in alphabetical order from 2, so integer order equals name order (used to break timestamp ties).
-- Reads the temporary table event_vocabulary (usable rows only). Parameters: none.
CREATE OR REPLACE TABLE features AS
SELECT 0 AS event_id, 'START' AS event
UNION ALL
SELECT 1 AS event_id, 'END' AS event
UNION ALL
SELECT (row_number() OVER (ORDER BY event) + 1)::INTEGER AS event_id, event
FROM (SELECT DISTINCT event FROM event_vocabulary);
