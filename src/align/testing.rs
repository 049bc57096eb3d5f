//! Melodies for the alignment's unit tests.

use crate::features::{MetricLevel, SeqNote, Sequence};

/// A deterministic melody of `len` notes (a 64-bit linear congruential generator, Knuth's
/// MMIX constants) with steps, leaps, repeated notes and two rhythms, so that
/// fragmentation and consolidation take part.
pub(crate) fn melody(len: usize, seed: u64) -> Sequence {
    let mut state = seed;
    let mut pitch = 67i32;
    let mut notes = Vec::with_capacity(len);
    let mut previous: Option<f64> = None;
    for i in 0..len {
        state = state
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        let step = ((state >> 33) % 9) as i32 - 4;
        let next = if (state >> 45) % 5 == 0 {
            pitch
        } else {
            (pitch + step).clamp(55, 84)
        };
        let ioi = if (state >> 40) % 3 == 0 { 0.5 } else { 1.0 };
        notes.push(SeqNote {
            pitch: next,
            pitch_class: next.rem_euclid(12) as u8,
            interval: (i > 0).then_some(next - pitch),
            ioi,
            log_ioi_ratio: previous.map(|p| (ioi / p).log2()),
            metric: if i % 4 == 0 {
                MetricLevel::Downbeat
            } else {
                MetricLevel::Weak
            },
        });
        pitch = next;
        previous = Some(ioi);
    }
    Sequence { notes }
}
