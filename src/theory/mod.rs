//! Music theory: pitch names and spelling, intervals and transpositions in words, keys (names,
//! tonics, scale degrees, spelling in a key), chord-symbol text and equal-temperament tuning.
//!
//! Numbers go in, names come out, and every table here is checked in tests against a source
//! outside the code (interval sizes against a theory handbook, frequencies against values
//! worked by hand from the equal-temperament formula f = 440 · 2^((n − 69)/12) with
//! A4 = 440 Hz per ISO 16:1975).
//!
//! ```
//! use collatio::theory::{pitch_name, Interval};
//! assert_eq!(pitch_name(60.0), "C4");
//! assert_eq!(Interval::parse("P5").map(|i| i.semitones()), Some(7));
//! ```

mod chord;
mod interval;
mod key;
mod pitch;
mod tuning;

pub use chord::{kind_suffix, parse_chord_symbol, ChordParts, KINDS};
pub use interval::{describe_pitch_class_shift, describe_transposition, Interval, Quality};
pub use key::{
    degree, fifths_of, key_name, parse_tonic, spell_in_key, spelling_shift, tonic, KeyMode,
};
pub use pitch::{pitch_name, PitchClassName, Spelling, Step};
pub use tuning::{cents_between, frequency_of, midi_of_frequency, DEFAULT_REFERENCE_HZ};
