-- Writes the temporary view mapped_source (canonical columns) to one Parquet file, for the Spark
-- engine to read local files DuckDB's readers mapped. Parameters: $path (the Parquet file).
COPY (SELECT * FROM mapped_source) TO $path (FORMAT parquet);
