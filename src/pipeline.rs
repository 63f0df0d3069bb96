//! Runs the stages in order from a [`crate::config::RunConfig`].
