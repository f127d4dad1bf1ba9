-- Returns the feature_model table, most expected visits first. Parameters: none.
SELECT * FROM feature_model ORDER BY expected_visits DESC, event;
