//! Passage exports that a notation editor opens: one MusicXML file and one MIDI file per
//! passage, each holding both works' bars of the passage as two parts (A, then B) in the
//! common key of the exhibit.
//!
//! In: an [`Exhibit`] and one passage with its [`PassageView`]. Out: MusicXML 4.0 text
//! ([`musicxml()`]) and Standard MIDI File bytes ([`midi()`]). Also the melody of a piece as
//! a MIDI file ([`melody_to_smf`]), to correct a transcription in an editor.
//!
//! [`Exhibit`]: super::exhibit::Exhibit
//! [`PassageView`]: super::notation::PassageView
//!
//! - MusicXML: partwise, one `<measure>` per shown bar, numbered from 1 (0 for a pickup,
//!   `implicit="yes"`); each part's first note of a bar carries the bar's printed label in the
//!   work as a `<words>` direction (`A bar 9`), because the two works' bar numbers differ. Notes
//!   carry a `color` attribute: navy `#1A386B` matched, vermilion `#CC421A` differs from its
//!   counterpart or has none, grey `#A0A0A8` outside the passage; the passage's first and last
//!   notes carry `passage N begins` / `ends` directions. The identification holds the inputs'
//!   SHA-256, the caution and the run's document digest (`document-digest`). Lyrics, chord
//!   symbols (as words above the staff) and grace notes are kept. The shorter work is padded
//!   with bars of rest so that both parts have the same number of measures.
//! - MIDI: format 1, 480 ticks per quarter; a conductor track (tempo of A at the passage, A's
//!   time signature, the common key, the caution and the document digest as text events), then
//!   one track per work on channels 1 and 2 with lyrics as FF 05 events and the passage's start
//!   and end as markers (FF 06). Velocity 96 for notes in the passage, 56 for notes outside it.
//!
//! The MusicXML is written by this module rather than through the `musicxml` crate's typed
//! model: that crate's writer (1.1) puts text and attribute values into the file without
//! escaping them, so a title or lyric with `&` or `<` would produce a malformed file, and it
//! declares the MusicXML 3.0 DTD. See `docs/exhibit.md`.

pub mod midi;
pub mod musicxml;

pub use midi::{digest_text, melody_to_smf, midi, MIDI_TPQ};
pub use musicxml::musicxml;

use super::notation::Mark;

/// File name stem of a passage's exports: `passage-01`.
pub fn file_stem(rank: usize) -> String {
    format!("passage-{rank:02}")
}

/// Colour of a mark in exports.
pub fn mark_color(mark: Mark) -> &'static str {
    match mark {
        Mark::Matched => "#1A386B",
        Mark::Differs => "#CC421A",
        Mark::Outside => "#A0A0A8",
    }
}
