//! Helpers shared by the integration tests.
#![allow(dead_code)]

pub mod cli;
pub mod graphs;
