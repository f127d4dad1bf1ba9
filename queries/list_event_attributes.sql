-- Returns event_attributes in attributes_id order (ids run from 0 without gaps): the app version
-- and platform the session cutter (gapfinder/session_cuts.py) gives each session by the id of its
-- first event. Reads event_attributes. Parameters: none.
SELECT attributes_id, app_version, platform
FROM event_attributes
ORDER BY attributes_id;
