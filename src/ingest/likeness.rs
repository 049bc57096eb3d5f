//! Melody-likeness of a candidate line: the track statistics of Rizo, Ponce de León,
//! Pérez-Sancho, Pertusa and Iñesta (2006), "A pattern recognition approach for melody track
//! selection in MIDI files" (ISMIR 2006) — occupation and polyphony rate, note density,
//! rhythmic variety, pitch range and spread, interval sizes and the share of steps —
//! computed on each candidate line, with the line's register taken relative to the work's own
//! lines rather than as absolute pitch (see [`relate`]), and combined by a logistic model
//! whose weights were fitted by `scripts/melody_dev_set.py` on one half of a development set
//! of real scores with a known melody (music21's bundled corpus, with copies in which the
//! accompaniment lies above the tune) and checked on the other half
//! (`docs/melody-choice.md`, `tests/melody_choice.rs`).

use crate::timeline::{LineFeatures, Note, VOICE_LIKE_DENSITY, VOICE_LIKE_SINGLE};

/// The features in the order of [`WEIGHTS`], as named in the development set.
pub const FEATURE_NAMES: [&str; 13] = [
    "single_onsets",
    "occupation",
    "density",
    "density_relative",
    "rhythm_variety",
    "range",
    "pitch_above_lowest",
    "pitch_below_voices",
    "pitch_spread",
    "interval_mean",
    "steps",
    "repeats",
    "leaps",
];

/// Intercept of the logistic model (fitted; see the module comment).
pub const INTERCEPT: f64 = -7.354663;

/// Weights of the logistic model, in the order of [`FEATURE_NAMES`] (fitted; see the module
/// comment).
pub const WEIGHTS: [f64; 13] = [
    4.172149, -1.545870, 1.098059, 1.745192, 3.278502, -0.671063, 1.024386, 4.029694, 0.308567,
    -1.331368, 2.101181, -1.749906, -3.095425,
];

/// Two lines whose melody-likeness differs by less than this are "close": the reports say
/// so and suggest naming the melody. A stated margin, not fitted.
pub const CLOSE: f64 = 0.1;

/// The features as a vector in the order of [`FEATURE_NAMES`].
pub fn feature_vector(f: &LineFeatures) -> [f64; 13] {
    [
        f.single_onsets,
        f.occupation,
        f.density,
        f.density_relative,
        f.rhythm_variety,
        f.range,
        f.pitch_above_lowest,
        f.pitch_below_voices,
        f.pitch_spread,
        f.interval_mean,
        f.steps,
        f.repeats,
        f.leaps,
    ]
}

/// The logistic model's linear predictor (log-odds that the line is the melody).
pub fn log_odds(f: &LineFeatures) -> f64 {
    log_odds_of(&feature_vector(f))
}

/// The linear predictor of a feature vector in the order of [`FEATURE_NAMES`] (missing
/// values count as 0).
pub fn log_odds_of(x: &[f64]) -> f64 {
    INTERCEPT
        + x.iter()
            .zip(WEIGHTS.iter())
            .map(|(a, w)| a * w)
            .sum::<f64>()
}

/// Melody-likeness in [0, 1]: the logistic function of [`log_odds`].
pub fn likeness(f: &LineFeatures) -> f64 {
    let z = log_odds(f);
    if !z.is_finite() {
        return 0.0;
    }
    1.0 / (1.0 + (-z).exp())
}

/// The statistics of one line that do not depend on the other candidates.
///
/// `notes`: the line's notes as written (chords included), in time order; `line`: its
/// top-voice reduction; `span`: the piece's sounding span in quarter notes (first onset to
/// last end over its pitched parts).
pub fn line_features(notes: &[&Note], line: &[Note], span: (f64, f64)) -> LineFeatures {
    let length = (span.1 - span.0).max(1e-9);
    let mut f = LineFeatures {
        single_onsets: single_onset_share(notes),
        occupation: (sounding_time(notes) / length).clamp(0.0, 1.0),
        density: (1.0 + line.len() as f64 / length).ln(),
        ..LineFeatures::default()
    };
    f.rhythm_variety = ioi_entropy(line) / 3.0;
    f.rhythm_variety = f.rhythm_variety.min(1.0);
    let pitches: Vec<f64> = line.iter().map(|n| n.pitch.0).collect();
    if pitches.is_empty() {
        return f;
    }
    let count = pitches.len() as f64;
    let mean = pitches.iter().sum::<f64>() / count;
    let variance = pitches.iter().map(|p| (p - mean).powi(2)).sum::<f64>() / count;
    let (low, high) = pitches
        .iter()
        .fold((f64::MAX, f64::MIN), |(l, h), &p| (l.min(p), h.max(p)));
    f.pitch_mean = (mean - 60.0) / 12.0;
    f.pitch_spread = variance.sqrt() / 12.0;
    f.range = ((high - low) / 24.0).min(2.0);
    let intervals: Vec<f64> = pitches
        .windows(2)
        .map(|w| (w[1] - w[0]).abs().round())
        .collect();
    if !intervals.is_empty() {
        let n = intervals.len() as f64;
        f.interval_mean = intervals.iter().sum::<f64>() / n / 12.0;
        f.steps = intervals
            .iter()
            .filter(|&&i| (1.0..=2.0).contains(&i))
            .count() as f64
            / n;
        f.repeats = intervals.iter().filter(|&&i| i == 0.0).count() as f64 / n;
        f.leaps = intervals.iter().filter(|&&i| i > 7.0).count() as f64 / n;
    }
    f
}

/// Fills the features relative to the other candidates: density over the densest, mean pitch
/// less the highest mean, less the lowest mean, and less the highest mean of the voice-like
/// lines ([`LineFeatures::pitch_below_voices`]). Register enters the model only through the
/// last two: a line's height among the work's own lines, never its absolute pitch (the
/// likeness of a line does not change when the whole work is transposed), and measured
/// against the lines that move like a voice, so that a pad or block chords above the tune do
/// not push it down (the high-voice superiority of independent voices, Huron 2001, "Tone and
/// voice", Music Perception 19(1), applies to lines heard as voices).
pub fn relate(features: &mut [LineFeatures]) {
    let densest = features.iter().map(|f| f.density).fold(0.0, f64::max);
    let highest = features
        .iter()
        .map(|f| f.pitch_mean)
        .fold(f64::MIN, f64::max);
    let lowest = features
        .iter()
        .map(|f| f.pitch_mean)
        .fold(f64::MAX, f64::min);
    for f in features.iter_mut() {
        f.density_relative = if densest > 0.0 {
            f.density / densest
        } else {
            0.0
        };
        f.pitch_mean_relative = f.pitch_mean - highest;
        f.pitch_above_lowest = f.pitch_mean - lowest;
    }
    let voice_like = |f: &&LineFeatures| {
        f.density_relative >= VOICE_LIKE_DENSITY && f.single_onsets >= VOICE_LIKE_SINGLE
    };
    let highest_voice = features
        .iter()
        .filter(voice_like)
        .map(|f| f.pitch_mean)
        .fold(f64::MIN, f64::max);
    let reference = if highest_voice > f64::MIN {
        highest_voice
    } else {
        highest
    };
    for f in features.iter_mut() {
        f.pitch_below_voices = (f.pitch_mean - reference).min(0.0);
    }
}

/// Share of distinct onsets at which exactly one note starts.
pub(crate) fn single_onset_share(notes: &[&Note]) -> f64 {
    let mut onsets = 0usize;
    let mut single = 0usize;
    let mut i = 0;
    while i < notes.len() {
        let mut j = i + 1;
        while j < notes.len() && notes[j].onset_ticks == notes[i].onset_ticks {
            j += 1;
        }
        onsets += 1;
        if j - i == 1 {
            single += 1;
        }
        i = j;
    }
    single as f64 / onsets.max(1) as f64
}

/// Quarter notes during which at least one of the notes sounds (the union of their spans).
fn sounding_time(notes: &[&Note]) -> f64 {
    let mut total = 0.0;
    let mut current: Option<(f64, f64)> = None;
    for n in notes {
        let (start, end) = (n.onset.0, n.onset.0 + n.duration.0.max(0.0));
        current = match current {
            Some((s, e)) if start <= e => Some((s, e.max(end))),
            Some((s, e)) => {
                total += e - s;
                Some((start, end))
            }
            None => Some((start, end)),
        };
    }
    if let Some((s, e)) = current {
        total += e - s;
    }
    total
}

/// Entropy in bits of the inter-onset intervals of a line, each rounded to 1/12 quarter note.
fn ioi_entropy(line: &[Note]) -> f64 {
    let mut counts: std::collections::BTreeMap<i64, usize> = std::collections::BTreeMap::new();
    for w in line.windows(2) {
        let ioi = ((w[1].onset.0 - w[0].onset.0) * 12.0).round();
        if ioi.is_finite() && ioi > 0.0 {
            *counts.entry(ioi.min(1e6) as i64).or_default() += 1;
        }
    }
    let total: usize = counts.values().sum();
    if total == 0 {
        return 0.0;
    }
    counts
        .values()
        .map(|&c| {
            let p = c as f64 / total as f64;
            -p * p.log2()
        })
        .sum()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A line of quarter notes at the given pitches, chords where a slot holds several.
    fn line(slots: &[&[f64]]) -> Vec<Note> {
        let mut out = Vec::new();
        for (k, slot) in slots.iter().enumerate() {
            for &p in *slot {
                out.push(Note {
                    onset: crate::units::Beats(k as f64),
                    duration: crate::units::Beats(1.0),
                    ..Note::at_ticks(k as i64 * 480, 480, p)
                });
            }
        }
        out
    }

    /// The features of each line, related: the top voice is the highest note of each onset.
    fn related(lines: &[Vec<Note>]) -> Vec<LineFeatures> {
        let mut features: Vec<LineFeatures> = lines
            .iter()
            .map(|notes| {
                let refs: Vec<&Note> = notes.iter().collect();
                let mut top: Vec<Note> = Vec::new();
                for n in notes {
                    match top.last_mut() {
                        Some(t) if t.onset_ticks == n.onset_ticks => {
                            if n.pitch.0 > t.pitch.0 {
                                *t = n.clone();
                            }
                        }
                        _ => top.push(n.clone()),
                    }
                }
                line_features(&refs, &top, (0.0, 8.0))
            })
            .collect();
        relate(&mut features);
        features
    }

    fn likenesses(lines: &[Vec<Note>]) -> Vec<f64> {
        related(lines).iter().map(likeness).collect()
    }

    /// A plain tune of single notes (a scale up and back), for the tests of register.
    const TUNE: &[&[f64]] = &[
        &[67.0],
        &[69.0],
        &[71.0],
        &[72.0],
        &[71.0],
        &[69.0],
        &[67.0],
    ];

    /// Register enters the model only relative to the work's own lines: transposing every line
    /// of a work by the same interval leaves every likeness unchanged.
    #[test]
    fn likeness_does_not_change_when_the_whole_work_is_transposed() {
        let tune = TUNE;
        let chords: &[&[f64]] = &[
            &[72.0, 76.0, 79.0],
            &[72.0, 77.0, 81.0],
            &[74.0, 79.0, 83.0],
        ];
        let bass: &[&[f64]] = &[&[43.0], &[48.0], &[50.0], &[43.0]];
        let work = [line(tune), line(chords), line(bass)];
        let before = likenesses(&work);
        for shift in [-24.0, -12.0, 5.0, 12.0] {
            let moved: Vec<Vec<Note>> = work
                .iter()
                .map(|l| {
                    l.iter()
                        .map(|n| Note {
                            pitch: crate::units::MidiPitch(n.pitch.0 + shift),
                            ..n.clone()
                        })
                        .collect()
                })
                .collect();
            let after = likenesses(&moved);
            for (a, b) in before.iter().zip(&after) {
                assert!((a - b).abs() < 1e-12, "{shift}: {before:?} {after:?}");
            }
        }
    }

    /// Block chords above a single-note line are not voice-like: the line's height is measured
    /// against the voice-like lines, so it is not below anything.
    #[test]
    fn chords_above_do_not_push_a_line_down() {
        let tune = TUNE;
        let chords: &[&[f64]] = &[
            &[76.0, 79.0, 84.0],
            &[77.0, 81.0, 84.0],
            &[79.0, 83.0, 86.0],
        ];
        let features = related(&[line(tune), line(chords)]);
        assert!(features[0].pitch_mean_relative < 0.0);
        assert_eq!(features[0].pitch_below_voices, 0.0);
    }
}
