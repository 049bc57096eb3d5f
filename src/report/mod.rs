//! Renderers: every output is drawn from the findings, never analysed here.
//!
//! - [`compare`]: the text listing and JSON record of a comparison; [`search`]: of a search;
//!   [`inspect`]: of one file read; [`pairings`]: which lines were compared.
//! - [`exhibit`]: the PDF exhibit, the JSON record and the exports as one call; [`pdf`] lays
//!   the PDF out, [`notation`] is the notation model shared by the staves and the exports,
//!   [`export`] writes MusicXML and MIDI.
//! - Shared pieces: [`format`] (numbers and spans), [`cautions`] (cautions in one wording),
//!   [`output`] (atomic writes that never replace an input), [`smf`] (the one MIDI writer),
//!   [`warnings`] (repeated warnings summarised).

pub mod cautions;
pub mod compare;
pub mod exhibit;
pub mod export;
pub mod format;
pub mod inspect;
pub mod notation;
pub mod output;
pub mod pairings;
pub mod pdf;
pub mod search;
pub mod smf;
pub mod warnings;
