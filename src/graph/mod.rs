//! Stage 4: similarity matrix to participant graphs in compressed sparse rows.
//!
//! Proportional-density thresholds (the strongest positive edges), isolated participants
//! reported. Community detection is the next stage's job.

// OWNER: communities helper.
