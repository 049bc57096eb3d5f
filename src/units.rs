//! Units of time and pitch as distinct types.
//!
//! Every stage of collatio speaks in these units, and conversions between time bases happen in
//! one place ([`crate::timeline::TempoMap`] for beats ↔ seconds). Conventions, stated once:
//!
//! - [`Beats`] count quarter notes (a 6/8 bar lasts 3 beats), from the start of the piece.
//! - [`Seconds`] are wall-clock seconds of performance, from the start of the piece.
//! - [`MidiPitch`] is a MIDI note number, 60 = C4 = middle C (MIDI 1.0 Detailed Specification);
//!   fractional values are allowed for audio (60.23 is 23 cents above C4).
//! - [`Hz`] is frequency; [`Cents`] are hundredths of an equal-tempered semitone.

use serde::Serialize;

macro_rules! unit {
    ($(#[$doc:meta])* $name:ident) => {
        $(#[$doc])*
        #[derive(Debug, Clone, Copy, PartialEq, PartialOrd, Default, Serialize)]
        #[serde(transparent)]
        pub struct $name(pub f64);

        impl $name {
            /// The raw value.
            pub fn get(self) -> f64 {
                self.0
            }
        }

        impl std::ops::Add for $name {
            type Output = Self;
            fn add(self, rhs: Self) -> Self {
                Self(self.0 + rhs.0)
            }
        }

        impl std::ops::Sub for $name {
            type Output = Self;
            fn sub(self, rhs: Self) -> Self {
                Self(self.0 - rhs.0)
            }
        }
    };
}

unit!(
    /// A span or position in quarter notes.
    Beats
);
unit!(
    /// A span or position in seconds.
    Seconds
);
unit!(
    /// A frequency in hertz.
    Hz
);
unit!(
    /// An interval in cents (1200 per octave).
    Cents
);
unit!(
    /// A MIDI note number; 60 = C4 = middle C, 69 = A4.
    MidiPitch
);
