//! Stage 9: the run summary to provenance JSON and TSV tables.
