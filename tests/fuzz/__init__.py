"""Property-based fuzzing of the loading pipeline, the formula grammar and the command line."""
