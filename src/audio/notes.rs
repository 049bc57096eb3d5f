//! Notes from an f0 track.
//!
//! In: a [`PitchTrack`] (f0 and voicing per frame) and the onset strength of the same frames.
//! Out: [`AudioNote`]s, one at a time, in time order.
//!
//! Method (collatio's own, in the spirit of the note stage of Mauch et al.'s Tony, 2015):
//! 1. Each voiced frame gets a fractional MIDI pitch `69 + 12 log2(f0 / reference_hz)`.
//! 2. Within each run of voiced frames the pitch is smoothed by a running median over
//!    `median_frames` frames and rounded to the semitone (after removing the run's own median
//!    deviation from the grid, so a uniformly sharp performance is not split); a new note starts
//!    where the rounded pitch changes and the new pitch holds for at least `min_frames` frames.
//!    Shorter excursions (slides, vibrato peaks) join the neighbouring note.
//! 3. Onsets are moved earlier, at most `onset_lookback` frames: a note that follows another
//!    without a gap starts where its pitch first appears among the frames' pYIN candidates
//!    (probability ≥ 0.05; the new note's periodicity shows in the window before it dominates
//!    it); a note after a gap, or one whose pitch shows no such emergence, starts at the
//!    strongest onset-strength peak before its first voiced frame (an instrument's attack shows
//!    in the spectrum before its pitch settles).
//!    A legato note's start then moves further back over the frames in which the previous
//!    note's periodicity is already disturbed: the probability of the previous pitch among the
//!    candidates below 90% of its median over that note (a soft attack under the previous
//!    note's release shows first as a loss of the old period, before its own period takes
//!    over); when the disturbance reaches further back than `onset_lookback` frames (a decay,
//!    not a new note) nothing moves. An attack-based start takes the strongest onset-strength
//!    peak from `onset_lookback` frames before the first voiced frame to two frames after it,
//!    and moves only when that peak comes before.
//! 4. Repeated notes of one pitch with no silence between them are split at peaks of the onset
//!    strength: a local maximum that exceeds the median of the note's onset strength by
//!    `onset_ratio` times its median absolute deviation, the note's mean by 50%, and the whole
//!    recording's median by `onset_ratio` times the recording's median absolute deviation and
//!    20% of the recording's strongest onset, where the voicing probability dips below 80% of
//!    the note's median within two frames (a re-attack disturbs the periodicity; the amplitude
//!    flutter of a steady tone does not); at least `min_repeat_frames` frames from either end.
//! 5. A note's onset is the time of its first frame; its end the time of its last frame plus
//!    one hop, or the next note's onset. Notes shorter than `min_frames` frames are dropped.
//! 6. Pitch: the median of the note's frame pitches (fractional); `rounded` is the nearest
//!    equal-tempered MIDI number and `cents` the deviation from it, −50 … 50. Confidence: the
//!    mean voicing probability of the frames times the share of frames within 50 cents of
//!    the median, capped at 0.99 (a transcription is never certain).

use super::pitch::PitchTrack;
use serde::Serialize;

/// Note segmentation parameters.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct NoteOptions {
    /// Shortest note in frames. Default 3 (≈ 70 ms at 512 samples per frame).
    pub min_frames: usize,
    /// Length of the running median over pitch, in frames (odd). Default 5.
    pub median_frames: usize,
    /// How far above the median an onset-strength peak must be, in median absolute deviations,
    /// to split a repeated note. Default 6.
    pub onset_ratio: f64,
    /// Shortest part, in frames, of a note split at a re-attack of the same pitch. Default 8
    /// (≈ 186 ms; repeated eighth notes at 120 bpm last 250 ms).
    pub min_repeat_frames: usize,
    /// How many frames before a note's first voiced frame its onset may be moved back to an
    /// onset-strength peak. Default 4 (≈ 93 ms).
    pub onset_lookback: usize,
}

impl Default for NoteOptions {
    fn default() -> Self {
        NoteOptions {
            min_frames: 3,
            median_frames: 5,
            onset_ratio: 6.0,
            onset_lookback: 4,
            min_repeat_frames: 8,
        }
    }
}

/// A transcribed note.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct AudioNote {
    /// Onset in seconds from the start of the analysed signal.
    pub onset: f64,
    /// End in seconds.
    pub offset: f64,
    /// Median pitch as a fractional MIDI number (A4 = the reference = 69).
    pub pitch: f64,
    /// Nearest equal-tempered MIDI number.
    pub rounded: i32,
    /// Deviation of `pitch` from `rounded`, in cents.
    pub cents: f64,
    /// Confidence, 0 … 0.99.
    pub confidence: f32,
    /// First frame.
    pub first_frame: usize,
    /// Frames (inclusive of `first_frame`).
    pub frames: usize,
}

fn median(values: &mut [f64]) -> f64 {
    if values.is_empty() {
        return 0.0;
    }
    values.sort_by(f64::total_cmp);
    let n = values.len();
    if n % 2 == 1 {
        values[n / 2]
    } else {
        0.5 * (values[n / 2 - 1] + values[n / 2])
    }
}

/// Transcribes notes (see the module docs). `onset_strength` has one value per frame of
/// `track` (missing values count as 0).
pub fn transcribe(
    track: &PitchTrack,
    onset_strength: &[f32],
    reference_hz: f64,
    options: &NoteOptions,
) -> Vec<AudioNote> {
    let n = track.f0.len();
    let min_frames = options.min_frames.max(1);
    let half = options.median_frames.max(1) / 2;
    let midi: Vec<Option<f64>> = (0..n)
        .map(|k| {
            let f = track.f0[k];
            (track.voiced.get(k).copied().unwrap_or(false) && f > 0.0)
                .then(|| super::midi_of_hz(f, reference_hz))
        })
        .collect();
    let mut segments: Vec<(usize, usize)> = Vec::new(); // [start, end)
    let mut k = 0;
    while k < n {
        if midi[k].is_none() {
            k += 1;
            continue;
        }
        let start = k;
        while k < n && midi[k].is_some() {
            k += 1;
        }
        let run: Vec<f64> = midi[start..k].iter().map(|m| m.unwrap_or(0.0)).collect();
        for (a, b) in split_run(&run, half, min_frames) {
            segments.push((start + a, start + b));
        }
    }
    // Legato transitions move back to where the new pitch emerges; notes after a gap (and
    // legato notes without an earlier emergence) move back to their attack.
    let after_gap: Vec<bool> = segments
        .iter()
        .enumerate()
        .map(|(i, s)| i == 0 || segments[i - 1].1 != s.0)
        .collect();
    let starts: Vec<usize> = segments.iter().map(|s| s.0).collect();
    let segments = extend_to_emergence(
        segments,
        track,
        &midi,
        reference_hz,
        min_frames,
        options.onset_lookback,
    );
    let segments = extend_to_disturbance(
        segments,
        track,
        &midi,
        reference_hz,
        min_frames,
        options.onset_lookback,
    );
    // The onset strength also places legato notes whose pitch shows no earlier emergence.
    let use_attack: Vec<bool> = segments
        .iter()
        .zip(&starts)
        .zip(&after_gap)
        .map(|((s, start), gap)| *gap || s.0 == *start)
        .collect();
    let refined = refine_onsets(
        segments,
        &use_attack,
        onset_strength,
        min_frames,
        options.onset_lookback,
    );
    // A re-attack must also stand out from the whole recording's onset strength, so that the
    // flutter of a steady tone is not taken for one.
    let mut all: Vec<f64> = onset_strength.iter().map(|v| f64::from(*v)).collect();
    let global_median = median(&mut all);
    let mut deviations: Vec<f64> = onset_strength
        .iter()
        .map(|v| (f64::from(*v) - global_median).abs())
        .collect();
    let global_max = onset_strength.iter().copied().fold(0.0f32, f32::max);
    let global_floor = (global_median + options.onset_ratio * median(&mut deviations))
        .max(0.2 * f64::from(global_max));
    let mut segments = Vec::with_capacity(refined.len());
    for (a, b) in refined {
        let strength = onset_strength_slice(onset_strength, a, b);
        let periodicity = &track.voiced_prob[a..b];
        for (c, d) in split_repeats(
            &strength,
            periodicity,
            options.min_repeat_frames.max(min_frames),
            options.onset_ratio,
            global_floor,
        ) {
            segments.push((a + c, a + d));
        }
    }
    let mut notes = Vec::with_capacity(segments.len());
    for (a, b) in segments {
        if b - a < min_frames {
            continue;
        }
        let mut pitches: Vec<f64> = midi[a..b].iter().flatten().copied().collect();
        let pitch = median(&mut pitches);
        let stable = pitches.iter().filter(|p| (*p - pitch).abs() <= 0.5).count() as f64
            / pitches.len().max(1) as f64;
        let voicing: f64 = track.voiced_prob[a..b]
            .iter()
            .map(|p| f64::from(*p))
            .sum::<f64>()
            / (b - a) as f64;
        let rounded = pitch.round();
        notes.push(AudioNote {
            onset: track.time(a),
            offset: track.time(b),
            pitch,
            rounded: rounded as i32,
            cents: 100.0 * (pitch - rounded),
            confidence: (voicing * stable).clamp(0.0, 0.99) as f32,
            first_frame: a,
            frames: b - a,
        });
    }
    notes
}

/// Least probability of a candidate that shows a new pitch emerging.
const EMERGENCE_PROB: f32 = 0.05;

/// Moves the start of a note that follows another without a gap back over the frames before
/// it (at most `lookback`) whose candidates already include its pitch (within 50 cents): the
/// new note's periodicity shows in the analysis window before it dominates it.
fn extend_to_emergence(
    mut segments: Vec<(usize, usize)>,
    track: &PitchTrack,
    midi: &[Option<f64>],
    reference_hz: f64,
    min_frames: usize,
    lookback: usize,
) -> Vec<(usize, usize)> {
    for i in 1..segments.len() {
        let (a, b) = segments[i];
        let (pa, pb) = segments[i - 1];
        if pb != a || b - a < min_frames {
            continue;
        }
        let mut pitches: Vec<f64> = midi[a..b].iter().flatten().copied().collect();
        let target = median(&mut pitches);
        let earliest = (pa + min_frames).max(a.saturating_sub(lookback));
        let mut start = a;
        while start > earliest {
            let k = start - 1;
            let present = track.candidates.get(k).is_some_and(|frame| {
                frame
                    .iter()
                    .any(|(f, p)| *p >= EMERGENCE_PROB && near(*f, target, reference_hz))
            });
            if !present {
                break;
            }
            start = k;
        }
        if start < a {
            segments[i] = (start, b);
            segments[i - 1] = (pa, start);
        }
    }
    segments
}

/// Share of a note's typical periodicity below which a frame counts as disturbed by the next
/// note.
const DISTURBANCE_RATIO: f64 = 0.9;

/// Least median probability of a note's own pitch for its disturbance to be measured (below
/// it, the note's periodicity is too weak to tell a disturbance from its usual flutter).
const MIN_TYPICAL_PROBABILITY: f64 = 0.3;

/// Whether a candidate frequency (Hz) lies within 50 cents of `target` (fractional MIDI).
fn near(hz: f32, target: f64, reference_hz: f64) -> bool {
    hz > 0.0 && (super::midi_of_hz(f64::from(hz), reference_hz) - target).abs() < 0.5
}

/// Probability mass of the frame's candidates within 50 cents of `target` (fractional MIDI).
fn pitch_probability(track: &PitchTrack, k: usize, target: f64, reference_hz: f64) -> f64 {
    track.candidates.get(k).map_or(0.0, |frame| {
        frame
            .iter()
            .filter(|(f, _)| near(*f, target, reference_hz))
            .map(|(_, p)| f64::from(*p))
            .sum()
    })
}

/// Moves the start of a note that follows another without a gap back over the frames (at
/// most `lookback`) in which the previous note's periodicity is already disturbed: the
/// probability of its pitch below [`DISTURBANCE_RATIO`] of its median over that note. A new
/// note disturbs the old one's period as soon as it sounds, before its own period dominates
/// the analysis window (a soft attack under a ringing release). When the disturbance reaches
/// further back than `lookback` (a slow decay rather than a new note), nothing moves.
fn extend_to_disturbance(
    mut segments: Vec<(usize, usize)>,
    track: &PitchTrack,
    midi: &[Option<f64>],
    reference_hz: f64,
    min_frames: usize,
    lookback: usize,
) -> Vec<(usize, usize)> {
    for i in 1..segments.len() {
        let (a, b) = segments[i];
        let (pa, pb) = segments[i - 1];
        if pb != a || b - a < min_frames || a - pa < 2 * min_frames {
            continue;
        }
        let mut pitches: Vec<f64> = midi[pa..pb].iter().flatten().copied().collect();
        let previous = median(&mut pitches);
        let mut own: Vec<f64> = (pa..pb)
            .map(|k| pitch_probability(track, k, previous, reference_hz))
            .collect();
        let typical = median(&mut own);
        if typical < MIN_TYPICAL_PROBABILITY {
            continue;
        }
        let disturbed = |k: usize| {
            pitch_probability(track, k, previous, reference_hz) < DISTURBANCE_RATIO * typical
        };
        let bound = a.saturating_sub(lookback);
        let earliest = (pa + min_frames).max(bound);
        let mut start = a;
        while start > earliest && disturbed(start - 1) {
            start -= 1;
        }
        let runs_further = start == bound && start > 0 && disturbed(start - 1);
        if start < a && !runs_further {
            segments[i] = (start, b);
            segments[i - 1] = (pa, start);
        }
    }
    segments
}

/// Moves each note's start back to the strongest onset-strength peak among the `lookback`
/// frames before it (an instrument's attack shows in the spectrum before its pitch settles),
/// when that peak stands above the envelope's median; the previous note then ends there.
fn refine_onsets(
    mut segments: Vec<(usize, usize)>,
    after_gap: &[bool],
    onset: &[f32],
    min_frames: usize,
    lookback: usize,
) -> Vec<(usize, usize)> {
    if onset.is_empty() || lookback == 0 {
        return segments;
    }
    let mut sorted: Vec<f64> = onset.iter().map(|v| f64::from(*v)).collect();
    let floor = median(&mut sorted);
    let value = |k: usize| onset.get(k).map_or(0.0, |v| f64::from(*v));
    for i in 0..segments.len() {
        if !after_gap.get(i).copied().unwrap_or(true) {
            continue;
        }
        let (a, b) = segments[i];
        let earliest = match i.checked_sub(1) {
            // Keep at least `min_frames` of the previous note.
            Some(p) => (segments[p].0 + min_frames).max(a.saturating_sub(lookback)),
            None => a.saturating_sub(lookback),
        };
        // The strongest peak from `earliest` to two frames into the note: an attack that
        // peaks at or just after the first voiced frame keeps the start where it is.
        let mut best = a;
        let mut best_value = value(a);
        for k in earliest..(a + 3).min(b) {
            let v = value(k);
            let peak = v >= value(k.wrapping_sub(1)) && v >= value(k + 1);
            if peak && v > best_value && v > 2.0 * floor {
                best = k;
                best_value = v;
            }
        }
        let best = best.min(a);
        if best < a {
            segments[i] = (best, b);
            if let Some(p) = i.checked_sub(1) {
                if segments[p].1 > best {
                    segments[p].1 = best;
                }
            }
        }
    }
    segments
}

fn onset_strength_slice(onset: &[f32], a: usize, b: usize) -> Vec<f32> {
    (a..b)
        .map(|k| onset.get(k).copied().unwrap_or(0.0))
        .collect()
}

/// Splits one voiced run (fractional MIDI pitches) where its smoothed, rounded pitch changes
/// for at least `min_frames` frames. Returns `[start, end)` ranges covering the run.
fn split_run(run: &[f64], half: usize, min_frames: usize) -> Vec<(usize, usize)> {
    let n = run.len();
    if n == 0 {
        return Vec::new();
    }
    let smooth: Vec<f64> = (0..n)
        .map(|i| {
            let lo = i.saturating_sub(half);
            let hi = (i + half + 1).min(n);
            let mut window = run[lo..hi].to_vec();
            median(&mut window)
        })
        .collect();
    // The run's own offset from the grid (a uniformly sharp or flat performance).
    let mut deviations: Vec<f64> = smooth.iter().map(|m| m - m.round()).collect();
    let offset = median(&mut deviations);
    let labels: Vec<i64> = smooth.iter().map(|m| (m - offset).round() as i64).collect();
    // Stretches of constant label.
    let mut stretches: Vec<(usize, usize, i64)> = Vec::new();
    let mut s = 0;
    for i in 1..=n {
        if i == n || labels[i] != labels[s] {
            stretches.push((s, i, labels[s]));
            s = i;
        }
    }
    // Merge short stretches into the neighbour nearest in pitch, shortest first.
    loop {
        let shortest = stretches
            .iter()
            .enumerate()
            .filter(|(_, st)| st.1 - st.0 < min_frames)
            .min_by_key(|(i, st)| (st.1 - st.0, *i))
            .map(|(i, _)| i);
        let Some(i) = shortest else { break };
        if stretches.len() == 1 {
            break;
        }
        let label = stretches[i].2;
        let target = match (i.checked_sub(1), stretches.get(i + 1)) {
            (Some(p), Some(next)) => {
                if (stretches[p].2 - label).abs() <= (next.2 - label).abs() {
                    p
                } else {
                    i + 1
                }
            }
            (Some(p), None) => p,
            (None, _) => i + 1,
        };
        let (a, b) = (stretches[i].0, stretches[i].1);
        let t = &mut stretches[target];
        t.0 = t.0.min(a);
        t.1 = t.1.max(b);
        stretches.remove(i);
        // Adjacent stretches with one label become one.
        let mut merged: Vec<(usize, usize, i64)> = Vec::with_capacity(stretches.len());
        for st in stretches.drain(..) {
            match merged.last_mut() {
                Some(last) if last.2 == st.2 => last.1 = st.1,
                _ => merged.push(st),
            }
        }
        stretches = merged;
    }
    stretches.into_iter().map(|(a, b, _)| (a, b)).collect()
}

/// Splits a note of one pitch at strong onset-strength peaks (re-articulated repeated notes).
fn split_repeats(
    onset: &[f32],
    voicing: &[f32],
    min_frames: usize,
    ratio: f64,
    global_floor: f64,
) -> Vec<(usize, usize)> {
    let n = onset.len();
    if n < 2 * min_frames + 1 {
        return vec![(0, n)];
    }
    let mut values: Vec<f64> = onset.iter().map(|v| f64::from(*v)).collect();
    let mean = values.iter().sum::<f64>() / n as f64;
    let med = median(&mut values);
    let mut abs_dev: Vec<f64> = onset.iter().map(|v| (f64::from(*v) - med).abs()).collect();
    let mad = median(&mut abs_dev).max(1e-9);
    let mut sorted: Vec<f64> = voicing.iter().map(|v| f64::from(*v)).collect();
    let typical_voicing = median(&mut sorted);
    let mut cuts = vec![0usize];
    for i in min_frames..n - min_frames {
        // A re-attack disturbs the periodicity: the voicing probability dips around it.
        let dip = voicing[i.saturating_sub(2)..(i + 2).min(n)]
            .iter()
            .any(|v| f64::from(*v) < 0.8 * typical_voicing);
        if !dip {
            continue;
        }
        let v = f64::from(onset[i]);
        let peak = v >= f64::from(onset[i - 1]) && v > f64::from(onset[i + 1]);
        if peak
            && v > med + ratio * mad
            && v > 1.5 * mean
            && v > global_floor
            && i - cuts.last().copied().unwrap_or(0) >= min_frames
        {
            cuts.push(i);
        }
    }
    cuts.push(n);
    cuts.windows(2).map(|w| (w[0], w[1])).collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn track(pitches: &[Option<f64>]) -> PitchTrack {
        PitchTrack {
            hop_seconds: 512.0 / 22_050.0,
            f0: pitches
                .iter()
                .map(|p| p.map_or(0.0, |m| super::super::hz_of_midi(m, 440.0)))
                .collect(),
            voiced: pitches.iter().map(Option::is_some).collect(),
            voiced_prob: pitches
                .iter()
                .map(|p| if p.is_some() { 0.9 } else { 0.1 })
                .collect(),
            candidates: Vec::new(),
        }
    }

    #[test]
    fn steps_and_gaps_make_notes() {
        let mut p = vec![Some(60.1); 10];
        p.extend(vec![None; 3]);
        p.extend(vec![Some(62.0); 8]);
        p.push(Some(63.0)); // a one-frame blip joins its neighbour
        p.extend(vec![Some(64.0); 8]);
        let notes = transcribe(&track(&p), &[], 440.0, &NoteOptions::default());
        let got: Vec<(i32, usize)> = notes.iter().map(|n| (n.rounded, n.frames)).collect();
        assert_eq!(got, vec![(60, 10), (62, 9), (64, 8)]);
        assert!((notes[0].cents - 10.0).abs() < 1e-6);
        assert!(notes.iter().all(|n| n.confidence < 1.0));
    }

    #[test]
    fn a_legato_onset_starts_where_the_old_period_is_disturbed() {
        // 12 frames of E4 (64), then G4 (67). The old pitch's candidate weakens from frame 12
        // (0.87 → 0.7 → 0.3), while the voiced track switches only at frame 14.
        let mut p = vec![Some(64.0); 14];
        p.extend(vec![Some(67.0); 12]);
        let mut t = track(&p);
        let hz = |m: f64| super::super::hz_of_midi(m, 440.0) as f32;
        t.candidates = (0..p.len())
            .map(|k| match k {
                0..=11 => vec![(hz(64.0), 0.87)],
                12 => vec![(hz(64.0), 0.7)],
                13 => vec![(hz(64.0), 0.3), (hz(40.0), 0.4)],
                _ => vec![(hz(67.0), 0.87)],
            })
            .collect();
        let notes = transcribe(&t, &[], 440.0, &NoteOptions::default());
        let starts: Vec<(i32, usize)> = notes.iter().map(|n| (n.rounded, n.first_frame)).collect();
        assert_eq!(starts, vec![(64, 0), (67, 12)]);
        // A slow decay (disturbed for longer than the lookback of 4 frames) moves nothing.
        for (c, p) in t.candidates[9..14]
            .iter_mut()
            .zip([0.7, 0.65, 0.6, 0.55, 0.3])
        {
            c[0].1 = p;
        }
        let notes = transcribe(&t, &[], 440.0, &NoteOptions::default());
        assert_eq!(notes[1].first_frame, 14);
    }

    #[test]
    fn onset_peak_splits_a_repeated_note() {
        let p = vec![Some(67.0); 20];
        let mut onset = vec![0.1f32; 20];
        onset[10] = 3.0;
        // (frames 0-9 and 10-19: both parts at least `min_repeat_frames` long)
        let mut t = track(&p);
        t.voiced_prob[10] = 0.3;
        let notes = transcribe(&t, &onset, 440.0, &NoteOptions::default());
        let frames: Vec<usize> = notes.iter().map(|n| n.first_frame).collect();
        assert_eq!(frames, vec![0, 10]);
    }
}
