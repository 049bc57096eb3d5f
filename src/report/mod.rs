//! Rendering results: human listings and JSON records.

pub mod compare;
pub mod inspect;
