//! The error of an option combination.

/// An option combination that clap cannot reject by itself.
#[derive(Debug, thiserror::Error)]
#[error("{0}")]
pub struct UsageError(pub String);
