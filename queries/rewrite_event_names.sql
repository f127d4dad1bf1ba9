-- Applies one rewrite rule to every name of raw_event_names (RE2 syntax, every match replaced).
-- Parameters: $pattern, $replacement.
UPDATE raw_event_names SET name = regexp_replace(name, $pattern, $replacement, 'g');
