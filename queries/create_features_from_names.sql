-- Creates the features table from the distinct event names another engine found (the Arrow frame
-- event_names_frame, column event), numbered exactly as queries/create_features.sql numbers them:
-- START 0, END 1, real events from 2 in name order. Parameters: none.
CREATE OR REPLACE TABLE features AS
SELECT 0 AS event_id, 'START' AS event
UNION ALL
SELECT 1 AS event_id, 'END' AS event
UNION ALL
SELECT (row_number() OVER (ORDER BY event) + 1)::INTEGER AS event_id, event
FROM (SELECT DISTINCT event FROM event_names_frame);
