//! Equal-temperament tuning.
//!
//! f(n) = f_ref · 2^((n − 69) / 12), with f_ref the frequency of A4 = MIDI 69. ISO 16:1975 fixes
//! A4 = 440 Hz, the default here; users may set another reference.

use crate::units::{Cents, Hz, MidiPitch};

/// The standard tuning reference, A4 = 440 Hz (ISO 16:1975).
pub const DEFAULT_REFERENCE_HZ: f64 = 440.0;

/// Equal-tempered frequency of a (possibly fractional) MIDI pitch, given the frequency of A4.
pub fn frequency_of(pitch: MidiPitch, reference: Hz) -> Hz {
    Hz(reference.0 * 2f64.powf((pitch.0 - 69.0) / 12.0))
}

/// Fractional MIDI pitch of a frequency, given the frequency of A4; inverse of
/// [`frequency_of`]. Returns `None` for non-positive or non-finite input.
pub fn midi_of_frequency(frequency: Hz, reference: Hz) -> Option<MidiPitch> {
    (frequency.0 > 0.0 && frequency.0.is_finite() && reference.0 > 0.0)
        .then(|| MidiPitch(69.0 + 12.0 * (frequency.0 / reference.0).log2()))
}

/// Size in cents of the interval from `low` to `high`: 1200 · log2(high / low).
pub fn cents_between(low: Hz, high: Hz) -> Cents {
    Cents(1200.0 * (high.0 / low.0).log2())
}
