//! `RunConfig`: every tunable with its default and unit; serialised into provenance.

/// The command line or configuration is invalid.
#[derive(Debug, thiserror::Error)]
pub enum ConfigError {
    /// A flag's value is invalid.
    #[error("{flag}: {message}")]
    Invalid {
        /// The flag, as spelled on the command line.
        flag: String,
        /// What is wrong and what to do.
        message: String,
    },
}
