-- Writes the demo's field events of the Parquet files $files to $path as a typical product-analytics
-- export: generic event names with a JSON text column of properties, and ids inside URL-like names.
-- Browsing events become screen_view with properties.screen; events about one tool become
-- /tools/<tool number>/<event>; the rest keep their name and carry a request id in properties.
-- Columns: user_id, ts, event_name, properties, app_version, platform, outcome. Parameters: $files, $path.
COPY (
    SELECT
        user_id,
        ts,
        CASE
            WHEN event IN ('search_catalogue', 'open_notifications', 'change_settings') THEN 'screen_view'
            WHEN event IN ('view_tool', 'reserve_tool', 'pick_slot', 'collect_tool', 'extend_loan', 'return_tool',
                           'report_damage', 'rate_tool', 'join_waitlist')
                THEN '/tools/' || CAST(1000 + hash(user_id, date_trunc('day', ts)) % 9000 AS VARCHAR) || '/' || event
            ELSE CAST(event AS VARCHAR)
        END AS event_name,
        CASE
            WHEN event IN ('search_catalogue', 'open_notifications', 'change_settings')
                THEN json_object('screen', CAST(event AS VARCHAR))::VARCHAR
            ELSE json_object('request', md5(user_id || CAST(ts AS VARCHAR)))::VARCHAR
        END AS properties,
        app_version,
        platform,
        outcome
    FROM read_parquet($files)
    ORDER BY ts, user_id
) TO $path (FORMAT parquet, COMPRESSION zstd);
