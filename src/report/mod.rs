//! Rendering results: the human listing and JSON record of `inspect`.

pub mod inspect;
