-- Creates the usage_edges table (the usage model's edges: counts and probabilities) from the
-- registered frame usage_edges_frame. Parameters: none.
CREATE OR REPLACE TABLE usage_edges AS SELECT * FROM usage_edges_frame;
