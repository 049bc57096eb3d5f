//! Audio recordings into the common timeline.
//!
//! The recording is decoded and analysed by [`crate::audio`]; the transcribed notes become one
//! part (`audio`), placed in time by the tracked beats:
//!
//! - **Ticks.** 480 ticks per quarter note. Each tracked beat gets a tick position; between
//!   beats, ticks are proportional to time, so the tempo map (one tempo per beat interval)
//!   returns each note's seconds to within one tick (≈ 1 ms at 120 bpm). Beats are extended
//!   before the first and after the last tracked beat at the neighbouring interval, to cover
//!   the whole recording; tick 0 is second 0 of the analysed range.
//! - **Beat unit.** The tracked beat is the meter's beat: a quarter note in 4/4 and 3/4, a half
//!   note in 2/2, an eighth in 3/8, a dotted quarter in 6/8, 9/8 and 12/8.
//! - **Bars.** From `--meter` (4/4 when not given) and `--downbeat SECONDS` (the tracked beat
//!   nearest to it starts a bar). Without `--downbeat`, the phase whose beats carry the most
//!   onset strength and the longest notes starting on them is taken. An opening part before
//!   the first downbeat is a pickup bar labelled 0 (merged into bar 1 when shorter than half a
//!   beat). Every audio bar is marked `estimated`: it rests on tracked beats.
//! - **Notes.** Fractional MIDI pitch (the median of the note's frames; the cents are kept),
//!   confidence below 1, no velocity or spelling.

use super::{Limits, Problem, RawBar, RawPiece};
use crate::audio::decode::{self, DecodeOptions, Decoded};
use crate::audio::{self, Analysis, AnalysisOptions, AudioError};
use crate::timeline::{ChromaLayer, Format, Note, Part, TempoChange, TimeSignature, Transcription};
use serde::Serialize;
use std::path::Path;

/// Ticks per quarter note of audio timelines.
pub const RESOLUTION: u32 = 480;

/// How to read an audio recording.
#[derive(Debug, Clone, Default, PartialEq, Serialize)]
pub struct AudioReadOptions {
    /// Decoding: range (`--from`, `--to`), duration limit, analysis rate.
    pub decode: DecodeOptions,
    /// Analysis parameters.
    pub analysis: AnalysisOptions,
    /// Meter as (numerator, denominator), e.g. (3, 4). Default: 4/4, assumed.
    pub meter: Option<(u32, u32)>,
    /// Time of a downbeat in seconds of the file. Default: estimated.
    pub downbeat: Option<f64>,
}

/// The container's name as used in messages.
pub fn container_name(format: Format) -> &'static str {
    match format {
        Format::Wav => "WAV",
        Format::Flac => "FLAC",
        Format::Mp3 => "MP3",
        Format::OggVorbis => "Ogg",
        Format::Aac => "MP4/AAC",
        Format::Aiff => "AIFF",
        Format::Midi | Format::MusicXml | Format::Mxl | Format::IndexedMelody => "non-audio",
    }
}

/// Decodes and analyses a recording on disk (streamed, never read whole into memory).
pub fn analyse_file(
    path: &Path,
    format: Format,
    options: &AudioReadOptions,
) -> Result<(Decoded, Analysis), AudioError> {
    let decoded = decode::decode_file(path, container_name(format), &options.decode)?;
    let analysis = audio::analyse(&decoded.samples, &options.analysis);
    Ok((decoded, analysis))
}

/// Decodes and analyses a recording held in memory.
pub fn analyse_bytes(
    bytes: &[u8],
    format: Format,
    options: &AudioReadOptions,
) -> Result<(Decoded, Analysis), AudioError> {
    let decoded = decode::decode_bytes(bytes, container_name(format), &options.decode)?;
    let analysis = audio::analyse(&decoded.samples, &options.analysis);
    Ok((decoded, analysis))
}

/// Reads a recording from disk into a reader's output.
pub(crate) fn read_file(
    path: &Path,
    format: Format,
    options: &AudioReadOptions,
    limits: &Limits,
) -> Result<RawPiece, Problem> {
    check_options(options)?;
    let (decoded, analysis) = analyse_file(path, format, options)?;
    build(format, &decoded, &analysis, options, limits)
}

/// Reads a recording held in memory into a reader's output.
pub(crate) fn read_bytes(
    bytes: &[u8],
    format: Format,
    options: &AudioReadOptions,
    limits: &Limits,
) -> Result<RawPiece, Problem> {
    check_options(options)?;
    let (decoded, analysis) = analyse_bytes(bytes, format, options)?;
    build(format, &decoded, &analysis, options, limits)
}

fn check_options(options: &AudioReadOptions) -> Result<(), AudioError> {
    if let Some((n, d)) = options.meter {
        if n == 0 || n > 64 || !matches!(d, 1 | 2 | 4 | 8 | 16 | 32) {
            return Err(AudioError::Options(format!(
                "meter {n}/{d}: the numerator must be 1-64 and the denominator 1, 2, 4, 8, 16 or 32"
            )));
        }
    }
    if options.downbeat.is_some_and(|s| !s.is_finite() || s < 0.0) {
        return Err(AudioError::Options(
            "--downbeat must be a non-negative number of seconds".into(),
        ));
    }
    Ok(())
}

/// The beat grid: beat times (seconds of the analysed range) and their ticks.
struct Grid {
    times: Vec<f64>,
    ticks: Vec<i64>,
    ticks_per_beat: i64,
}

impl Grid {
    /// Builds the grid from tracked beats, extended to cover `0 ..= duration` seconds.
    fn new(tracked: &[f64], duration: f64, ticks_per_beat: i64) -> Grid {
        let mut times: Vec<f64> = tracked.iter().copied().filter(|t| *t >= 0.0).collect();
        if times.len() < 2 {
            times = vec![0.0, 0.5];
        }
        let first_interval = (times[1] - times[0]).max(0.05);
        while times[0] - first_interval >= 0.0 {
            times.insert(0, times[0] - first_interval);
        }
        let n = times.len();
        let last_interval = (times[n - 1] - times[n - 2]).max(0.05);
        while times.last().is_some_and(|t| *t < duration) {
            let next = times.last().copied().unwrap_or(0.0) + last_interval;
            times.push(next);
        }
        let times = fit_segments(&times, SEGMENT_TOLERANCE);
        let interval0 = (times.get(1).copied().unwrap_or(0.5) - times[0]).max(0.05);
        let tick0 = (times[0] / interval0 * ticks_per_beat as f64).round() as i64;
        let ticks = (0..times.len())
            .map(|k| tick0 + k as i64 * ticks_per_beat)
            .collect();
        Grid {
            times,
            ticks,
            ticks_per_beat,
        }
    }

    /// Tick position of a time in seconds (piecewise linear between beats).
    fn tick_of(&self, seconds: f64) -> i64 {
        let k = self.times.partition_point(|t| *t <= seconds);
        if k == 0 {
            let t0 = self.times[0];
            return if t0 > 0.0 {
                (seconds.max(0.0) / t0 * self.ticks[0] as f64).round() as i64
            } else {
                0
            };
        }
        let i = k - 1;
        let (t, tick) = (self.times[i], self.ticks[i]);
        let interval = match self.times.get(i + 1) {
            Some(next) => next - t,
            None => t - self.times[i.saturating_sub(1)],
        }
        .max(1e-3);
        tick + ((seconds - t) / interval * self.ticks_per_beat as f64).round() as i64
    }

    /// The tempo map: one change per beat interval (consecutive equal tempos merge when the
    /// map is built), plus the stretch before the first beat.
    fn tempo(&self) -> Vec<TempoChange> {
        let per_quarter = f64::from(RESOLUTION);
        let mut changes = Vec::with_capacity(self.times.len() + 1);
        if self.ticks[0] > 0 {
            changes.push(TempoChange {
                ticks: 0,
                micros_per_quarter: self.times[0] / self.ticks[0] as f64 * per_quarter * 1e6,
            });
        }
        for k in 0..self.times.len() {
            let interval = match self.times.get(k + 1) {
                Some(next) => next - self.times[k],
                None => self.times[k] - self.times[k.saturating_sub(1)],
            }
            .max(1e-3);
            let micros = interval / self.ticks_per_beat as f64 * per_quarter * 1e6;
            // Beats of one steady stretch share a tempo up to rounding; keep one change.
            if changes
                .last()
                .is_some_and(|c: &TempoChange| (c.micros_per_quarter - micros).abs() < 1e-3)
            {
                continue;
            }
            changes.push(TempoChange {
                ticks: self.ticks[k],
                micros_per_quarter: micros,
            });
        }
        changes
    }
}

/// Largest distance in seconds between a tracked beat and the steady-tempo line fitted through
/// its stretch: a little more than one analysis frame (23 ms), the tracker's resolution.
const SEGMENT_TOLERANCE: f64 = 0.03;

/// Replaces beat times by stretches of steady tempo: greedily, each stretch runs from its first
/// beat as far as every beat in it stays within `tolerance` seconds of the straight line from
/// the first to the last beat of the stretch. The tempo map then changes only where the
/// performance does, rather than at every beat (the tracker's beats jitter by a frame).
fn fit_segments(times: &[f64], tolerance: f64) -> Vec<f64> {
    let n = times.len();
    if n < 3 {
        return times.to_vec();
    }
    let mut out = Vec::with_capacity(n);
    let mut start = 0usize;
    while start < n - 1 {
        let fits = |end: usize| {
            let period = (times[end] - times[start]) / (end - start) as f64;
            (start + 1..end).all(|k| {
                (times[k] - (times[start] + (k - start) as f64 * period)).abs() <= tolerance
            })
        };
        let mut end = start + 1;
        while end + 1 < n && fits(end + 1) {
            end += 1;
        }
        let period = (times[end] - times[start]) / (end - start) as f64;
        for k in start..end {
            out.push(times[start] + (k - start) as f64 * period);
        }
        start = end;
    }
    out.push(times[n - 1]);
    out
}

/// Beats per bar and ticks per beat for a meter (see the module docs).
fn meter_layout(numerator: u32, denominator: u32) -> (usize, i64) {
    let quarter = i64::from(RESOLUTION);
    if denominator == 8 && numerator % 3 == 0 && numerator > 3 {
        ((numerator / 3) as usize, quarter * 3 / 2)
    } else {
        (
            numerator.max(1) as usize,
            quarter * 4 / i64::from(denominator.max(1)),
        )
    }
}

fn build(
    format: Format,
    decoded: &Decoded,
    analysis: &Analysis,
    options: &AudioReadOptions,
    limits: &Limits,
) -> Result<RawPiece, Problem> {
    let mut warnings = decoded.warnings.clone();
    if analysis.notes.is_empty() {
        let voiced = analysis.pitch.voiced.iter().filter(|v| **v).count();
        return Err(AudioError::NoMelody(format!(
            "{:.1} s analysed, {voiced} of {} frames voiced and no note of at least {} frames \
             (silence, noise or unpitched sound?)",
            decoded.seconds(),
            analysis.pitch.voiced.len(),
            options.analysis.notes.min_frames
        ))
        .into());
    }
    limits.check_notes(analysis.notes.len() as u64)?;
    let meter_given = options.meter.is_some();
    let (numerator, denominator) = options.meter.unwrap_or((4, 4));
    let (beats_per_bar, ticks_per_beat) = meter_layout(numerator, denominator);
    let duration = decoded.seconds();
    let tracked = &analysis.beats.beats;
    if tracked.len() < 2 {
        warnings.push(
            "audio: no steady beat was found; bars assume 120 beats per minute from the start"
                .into(),
        );
    }
    let grid = Grid::new(tracked, duration, ticks_per_beat);

    // Downbeat phase.
    let start = decoded.start_seconds;
    let phase = match options.downbeat {
        Some(at) => {
            let relative = at - start;
            let nearest = (0..grid.times.len())
                .min_by(|a, b| {
                    (grid.times[*a] - relative)
                        .abs()
                        .total_cmp(&(grid.times[*b] - relative).abs())
                })
                .unwrap_or(0);
            let beat = grid.times.get(1).map_or(0.5, |b| b - grid.times[0]);
            let off = (grid.times[nearest] - relative).abs();
            if off > 0.25 * beat {
                warnings.push(format!(
                    "audio: --downbeat {at:.3} s is {off:.3} s from the nearest tracked beat \
                     ({:.3} s); bars start there",
                    grid.times[nearest] + start
                ));
            }
            nearest % beats_per_bar
        }
        None => estimate_phase(&grid, analysis, beats_per_bar),
    };

    // Bars from tick 0 to the end of the recording (or the last note, if later).
    let last_note_end = analysis
        .notes
        .iter()
        .map(|n| grid.tick_of(n.offset))
        .max()
        .unwrap_or(0);
    let end_tick = grid.tick_of(duration).max(last_note_end);
    let bar_ticks = ticks_per_beat * beats_per_bar as i64;
    let mut starts: Vec<i64> = Vec::new();
    let mut k = phase;
    while let Some(&tick) = grid.ticks.get(k) {
        if tick >= end_tick && !starts.is_empty() {
            break;
        }
        starts.push(tick);
        k += beats_per_bar;
    }
    let mut tick = starts.last().copied().unwrap_or(0);
    while tick + bar_ticks < end_tick {
        tick += bar_ticks;
        starts.push(tick);
    }
    let mut pickup = false;
    match starts.first().copied() {
        Some(first) if first > 0 && first * 2 >= ticks_per_beat => {
            starts.insert(0, 0);
            pickup = true;
        }
        Some(_) => {
            if let Some(first) = starts.first_mut() {
                *first = 0;
            }
        }
        None => starts.push(0),
    }
    limits.check_bars(starts.len() as u64)?;
    let base = usize::from(!pickup);
    let bars: Vec<RawBar> = starts
        .iter()
        .enumerate()
        .map(|(i, &s)| {
            let next = starts.get(i + 1).copied().unwrap_or(s + bar_ticks);
            RawBar {
                label: (i + base).to_string(),
                start_ticks: s,
                length_ticks: (next - s).max(1),
                time_signature: (numerator, denominator),
                pickup: pickup && i == 0,
                implicit: false,
            }
        })
        .collect();

    let notes: Vec<Note> = analysis
        .notes
        .iter()
        .map(|n| {
            let onset = grid.tick_of(n.onset);
            let end = grid.tick_of(n.offset).max(onset + 1);
            Note {
                confidence: n.confidence.min(0.99),
                ..Note::at_ticks(onset, end - onset, n.pitch)
            }
        })
        .collect();

    let range = match (decoded.start_seconds, options.decode.to) {
        (a, Some(b)) => format!("{a:.3}-{b:.3} s"),
        (a, None) if a > 0.0 => format!("{a:.3} s to the end"),
        _ => "the whole recording".to_string(),
    };
    // "FLAC" rather than "FLAC in FLAC" when the codec names its own container.
    let codec = if decoded.codec == container_name(format) {
        decoded.codec.clone()
    } else {
        format!("{} in {}", decoded.codec, container_name(format))
    };
    let detail = format!(
        "{codec}, {} Hz, {} channel{}, {:.3} s; analysed {range} ({:.3} s) at {} Hz; tuning \
         {:+.0} cents; {}; meter {numerator}/{denominator} ({}); \
         downbeat {}; bars estimated from the beats; {} notes transcribed ({}){}",
        decoded.source_rate,
        decoded.channels,
        if decoded.channels == 1 { "" } else { "s" },
        decoded.source_seconds,
        duration,
        decoded.sample_rate,
        analysis.chroma.tuning * 100.0,
        if analysis.beats.beats.is_empty() {
            "no steady beat (120 bpm assumed)".to_string()
        } else {
            format!("tempo {:.1} bpm (tracked)", analysis.beats.tempo_bpm)
        },
        if meter_given { "given" } else { "assumed" },
        if options.downbeat.is_some() {
            "given"
        } else {
            "estimated"
        },
        notes.len(),
        if analysis.melody_source == "mix" {
            "predominant melody of a mix"
        } else {
            "pYIN, one line"
        },
        unsure_text(&analysis.unsure),
    );
    let part = Part::single_line("audio".into(), "transcribed melody".into(), notes);
    Ok(RawPiece {
        detail,
        title: None,
        composer: None,
        resolution: RESOLUTION,
        parts: vec![part],
        bars,
        tempo: grid.tempo(),
        time_signatures: vec![TimeSignature {
            ticks: 0,
            numerator,
            denominator,
        }],
        key_signatures: Vec::new(),
        chord_symbols: Vec::new(),
        ornaments: Vec::new(),
        warnings,
        chroma: Some(chroma_layer(
            decoded,
            analysis,
            if tracked.len() >= 2 {
                grid.times.clone()
            } else {
                Vec::new()
            },
        )),
        unsure_spans: analysis.unsure.iter().map(|&(a, b)| [a, b]).collect(),
        transcription: Some(transcription(decoded, analysis, options)),
    })
}

/// The settings and estimates of one reading of a recording, for the record.
fn transcription(
    decoded: &Decoded,
    analysis: &Analysis,
    options: &AudioReadOptions,
) -> Transcription {
    let a = &options.analysis;
    Transcription {
        a4_hz: a.reference_hz,
        fmin_hz: a.pitch.fmin,
        fmax_hz: a.pitch.fmax,
        from_seconds: options.decode.from,
        to_seconds: options.decode.to,
        max_seconds: options.decode.max_seconds,
        tempo_hint_bpm: a.beats.tempo_hint,
        meter: options.meter,
        downbeat_seconds: options.downbeat,
        melody_requested: match a.melody_source {
            crate::audio::MelodySource::Auto => "auto",
            crate::audio::MelodySource::Solo => "solo",
            crate::audio::MelodySource::Mix => "mix",
        }
        .to_string(),
        melody_used: analysis.melody_source.to_string(),
        analysis_rate_hz: decoded.sample_rate,
        analysed_seconds: decoded.seconds(),
        estimated_tuning_semitones: analysis.chroma.tuning,
        estimated_tempo_bpm: analysis.beats.tempo_bpm,
    }
}

/// The unsure spans of a transcription in words, e.g. `; unsure over 3 spans (4.2 s)`.
fn unsure_text(spans: &[(f64, f64)]) -> String {
    if spans.is_empty() {
        return String::new();
    }
    let total: f64 = spans.iter().map(|(a, b)| b - a).sum();
    format!(
        "; melody extractor unsure over {} span{} ({total:.1} s)",
        spans.len(),
        if spans.len() == 1 { "" } else { "s" }
    )
}

/// Frames quieter than this many decibels below the loud frames (the 95th percentile of the
/// frame levels) count as silence in the harmony layer.
const SILENCE_DB: f32 = 40.0;

/// The recording's harmony layer: the analysis chroma with silent frames set to zero. The
/// chroma of each frame is scaled to its maximum, which would turn the faint noise of a lead-in
/// or a fade into a full-scale profile; zero frames say "nothing sounds" instead. `beats` are
/// the tracked beats (extended over the whole recording), empty when none were found.
fn chroma_layer(decoded: &Decoded, analysis: &Analysis, beats: Vec<f64>) -> ChromaLayer {
    let hop = analysis.hop_length.max(1);
    let samples = &decoded.samples;
    let level = |k: usize| -> f32 {
        // Mean square over a window of 4 hops centred on the frame.
        let lo = (k * hop).saturating_sub(2 * hop).min(samples.len());
        let hi = (k * hop + 2 * hop).min(samples.len());
        let window = &samples[lo..hi];
        if window.is_empty() {
            0.0
        } else {
            window.iter().map(|x| x * x).sum::<f32>() / window.len() as f32
        }
    };
    let levels: Vec<f32> = (0..analysis.chroma.frames.len()).map(level).collect();
    let mut sorted = levels.clone();
    sorted.sort_by(f32::total_cmp);
    let loud = sorted
        .get((sorted.len() as f64 * 0.95) as usize)
        .or(sorted.last())
        .copied()
        .unwrap_or(0.0);
    let floor = loud * 10f32.powf(-SILENCE_DB / 10.0);
    let frames = analysis
        .chroma
        .frames
        .iter()
        .zip(&levels)
        .map(|(frame, level)| if *level > floor { *frame } else { [0.0; 12] })
        .collect();
    let mut onsets = analysis.onset_strength.clone();
    onsets.resize(analysis.chroma.frames.len(), 0.0);
    ChromaLayer {
        hop_seconds: analysis.chroma.hop_seconds,
        tuning: analysis.chroma.tuning,
        source: crate::timeline::ChromaSource::Recording,
        frames,
        onsets,
        beats,
    }
}

/// The downbeat phase (0 … beats_per_bar − 1) whose beats carry the most onset strength and
/// the longest notes starting within 70 ms of them.
fn estimate_phase(grid: &Grid, analysis: &Analysis, beats_per_bar: usize) -> usize {
    if beats_per_bar <= 1 {
        return 0;
    }
    let hop = analysis.hop_length as f64 / f64::from(analysis.sample_rate);
    let mut scores = vec![0.0f64; beats_per_bar];
    for (j, &t) in grid.times.iter().enumerate() {
        let frame = (t / hop).round() as usize;
        let strength = analysis
            .onset_strength
            .get(frame)
            .map_or(0.0, |v| f64::from(*v));
        let notes: f64 = analysis
            .notes
            .iter()
            .filter(|n| (n.onset - t).abs() <= 0.07)
            .map(|n| n.offset - n.onset)
            .sum();
        scores[j % beats_per_bar] += strength + notes;
    }
    (0..beats_per_bar)
        .max_by(|a, b| scores[*a].total_cmp(&scores[*b]).then(b.cmp(a)))
        .unwrap_or(0)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn grid_maps_beats_to_ticks_and_back() {
        // Beats every 0.6 s (100 bpm) from 0.3 s, over 5 s.
        let tracked: Vec<f64> = (0..8).map(|k| 0.3 + 0.6 * k as f64).collect();
        let grid = Grid::new(&tracked, 5.0, 480);
        assert_eq!(grid.tick_of(0.3), grid.ticks[0]);
        assert_eq!(grid.tick_of(0.9) - grid.tick_of(0.3), 480);
        let map = crate::timeline::TempoMap::new(RESOLUTION, grid.tempo());
        for t in [0.0, 0.1, 0.3, 1.234, 4.9, 5.3] {
            let back = map.seconds_at(grid.tick_of(t)).0;
            assert!((back - t).abs() < 0.002, "{t} → {back}");
        }
    }

    #[test]
    fn compound_meters_beat_in_dotted_quarters() {
        assert_eq!(meter_layout(6, 8), (2, 720));
        assert_eq!(meter_layout(3, 4), (3, 480));
        assert_eq!(meter_layout(2, 2), (2, 960));
        assert_eq!(meter_layout(3, 8), (3, 240));
    }
}
