//! The harmony layer of any piece: a chromagram measured from a recording, or derived from
//! every sounding note of a score or MIDI file.
//!
//! Notes become chroma through a model of what a recording's chroma would show, so that a
//! notated chord resembles the chroma of a performance of it: each note is given its first
//! eight partials with amplitudes `1/h` (a sawtooth-like spectrum, common practice for
//! sustained instruments; a modelling choice, not a measured constant), each partial's power
//! is weighted by the same Gaussian over octaves as the recording's chroma filter bank
//! (centred on A5 = 880 Hz, two octaves wide, [`crate::audio::chroma`]), scaled by the note's
//! velocity squared (power; 100 when the file gives none), and added to the partial's pitch
//! class from the note's onset to its end. Percussion parts are left out. Frames use the
//! audio analysis step (512 samples at 22,050 Hz ≈ 23.2 ms) so that both kinds of piece share
//! one time base, and each frame is divided by its maximum like the recording's chroma.

use crate::timeline::{ChromaLayer, Note, Piece};

/// Frame step of derived chroma in seconds: the audio analysis hop (512 / 22,050 s).
pub const HOP_SECONDS: f64 = 512.0 / 22_050.0;

/// Partials modelled per note.
const PARTIALS: usize = 8;
/// Centre of the octave weighting, octaves above A0 (27.5 Hz): A5, as the chroma filter bank.
const CENTRE_OCTAVE: f64 = 5.0;
/// Standard deviation of the octave weighting, octaves.
const OCTAVE_WIDTH: f64 = 2.0;

/// The power a note of MIDI pitch `pitch` adds to each pitch class (0 = C).
fn note_template(pitch: f64) -> [f32; 12] {
    let mut template = [0f32; 12];
    for h in 1..=PARTIALS {
        let partial = pitch + 12.0 * (h as f64).log2();
        // Octaves above A0 (MIDI 21).
        let octave = (partial - 21.0) / 12.0;
        let weight = (-0.5 * ((octave - CENTRE_OCTAVE) / OCTAVE_WIDTH).powi(2)).exp();
        let class = (partial.round() as i64).rem_euclid(12) as usize;
        template[class] += (weight / (h * h) as f64) as f32;
    }
    template
}

/// Longest derived chromagram, in frames (six hours at [`HOP_SECONDS`]); later notes are
/// left out so that a hostile file cannot ask for unbounded memory.
const MAX_FRAMES: usize = 6 * 3600 * 44;

/// The chroma of a piece: the measured one for a recording, otherwise derived from the notes
/// of every pitched part (not only the selected melody).
pub fn chroma_of(piece: &Piece) -> ChromaLayer {
    match &piece.chroma {
        Some(layer) => layer.clone(),
        None => with_beats(
            chroma_of_notes(
                piece
                    .parts
                    .iter()
                    .filter(|p| !p.percussion)
                    .flat_map(|p| p.notes.iter()),
            ),
            piece,
        ),
    }
}

/// Most quarter notes listed in [`ChromaLayer::beats`] (two days at 120 bpm).
const MAX_BEATS: usize = 2 * 24 * 3600 * 2;

/// The layer with its piece's quarter-note times up to one quarter past its end (none when
/// the tempo map is degenerate or the piece holds more than [`MAX_BEATS`] quarters).
fn with_beats(mut layer: ChromaLayer, piece: &Piece) -> ChromaLayer {
    let quarter = i64::from(piece.tempo.resolution.max(1));
    let end = layer.seconds();
    let mut beats = Vec::new();
    for k in 0..MAX_BEATS as i64 {
        let t = piece.tempo.seconds_at(k * quarter).0;
        if !t.is_finite() || beats.last().is_some_and(|last| t <= *last) {
            break;
        }
        beats.push(t);
        if t > end {
            layer.beats = beats;
            return layer;
        }
    }
    layer
}

/// The chroma of a piece's selected melody alone (the measured chroma for a recording): what
/// a recording of only that line would show.
pub fn melody_chroma_of(piece: &Piece) -> ChromaLayer {
    match &piece.chroma {
        Some(layer) => layer.clone(),
        None => with_beats(chroma_of_notes(piece.melody.iter()), piece),
    }
}

/// The chroma of a set of notes (see the module documentation).
fn chroma_of_notes<'a>(notes: impl Iterator<Item = &'a Note> + Clone) -> ChromaLayer {
    let end = notes
        .clone()
        .map(|n| n.onset_seconds.0 + n.duration_seconds.0)
        .filter(|t| t.is_finite())
        .fold(0.0f64, f64::max);
    let n_frames = ((end / HOP_SECONDS).ceil() as usize + 1).min(MAX_FRAMES);
    let mut frames = vec![[0f32; 12]; n_frames];
    let mut onsets = vec![0f32; n_frames];
    for note in notes {
        let loudness = note.velocity.map_or(1.0, |v| f32::from(v.max(1)) / 100.0);
        let mut template = note_template(note.pitch.0);
        for t in &mut template {
            *t *= loudness * loudness;
        }
        let first = (note.onset_seconds.0 / HOP_SECONDS).round().max(0.0) as usize;
        let last = ((note.onset_seconds.0 + note.duration_seconds.0) / HOP_SECONDS)
            .round()
            .max(0.0) as usize;
        if let Some(onset) = onsets.get_mut(first) {
            *onset += loudness * loudness;
        }
        for frame in frames
            .iter_mut()
            .take(last.max(first + 1).min(n_frames))
            .skip(first)
        {
            for (f, t) in frame.iter_mut().zip(&template) {
                *f += t;
            }
        }
    }
    for frame in &mut frames {
        let max = frame.iter().copied().fold(0.0f32, f32::max);
        if max > 0.0 {
            for v in frame.iter_mut() {
                *v /= max;
            }
        }
    }
    ChromaLayer {
        hop_seconds: HOP_SECONDS,
        tuning: 0.0,
        source: crate::timeline::ChromaSource::Notes,
        frames,
        onsets,
        beats: Vec::new(),
    }
}
