//! Rendering results: human listings, JSON records, the PDF exhibit and passage exports.

pub mod compare;
pub mod evidence;
pub mod exhibit;
pub mod export;
pub mod inspect;
pub mod notation;
pub mod pdf;
