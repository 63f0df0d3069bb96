//! The fictional Northfield Sleep and Mood cohort generator.

// OWNER: demo helper.
