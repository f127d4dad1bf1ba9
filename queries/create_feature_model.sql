-- Creates the feature_model table (per feature: expected visits and visit probability per session,
-- expected sessions until it first appears, long-run share of events) from the registered frame
-- feature_model_frame. Parameters: none.
CREATE OR REPLACE TABLE feature_model AS SELECT * FROM feature_model_frame;
