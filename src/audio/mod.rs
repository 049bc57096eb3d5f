//! Audio analysis: from a recording to notes, chroma and a beat grid.
//!
//! In: encoded audio (WAV, FLAC, MP3, Ogg/Vorbis, AAC/M4A, AIFF). Out: an [`Analysis`] with
//! the frame-wise fundamental frequency ([`pitch::PitchTrack`]), the transcribed melody
//! ([`notes::AudioNote`]), a chromagram ([`chroma::Chroma`]) and beats ([`beats::BeatTrack`]).
//! The ingest layer (`crate::ingest`) turns an analysis into the common timeline.
//!
//! Stages, each a small module with its published method named in its docs:
//!
//! | module | what | method |
//! |---|---|---|
//! | [`decode`] | container and codec → mono `f32` at the analysis rate, in blocks | symphonia; channel mean |
//! | [`resample`] | sample-rate conversion | rubato's FFT resampler |
//! | [`stft`] | short-time Fourier transform, Hann window | rustfft via realfft |
//! | [`chroma`] | tuning estimate and 12-bin chroma | Ellis's chroma filter bank (chroma_stft) |
//! | [`pitch`] | f0 per frame | YIN (de Cheveigné & Kawahara 2002), pYIN (Mauch & Dixon 2014) |
//! | [`notes`] | notes from the f0 track | segmentation of voiced runs; median pitch |
//! | [`melody`] | predominant melody of polyphonic audio, with unsure spans | salience by harmonic summation, pitch contours (Salamon & Gómez 2012) |
//! | [`beats`] | onset strength, tempo, beats | spectral flux; dynamic programming (Ellis 2007) |
//! | [`eval`] | evaluation measures | as defined by mir_eval (Raffel et al. 2014) |
//!
//! Conventions, stated once for the whole module:
//! - Analysis rate 22,050 Hz, mono (the mean of all channels).
//! - Frame `k` is centred on sample `k · hop_length` (the first frame on sample 0; the STFT
//!   takes the signal as zero outside its ends, the pitch tracker clips its frames to the
//!   signal instead), so its time is `k · hop_length / sample_rate` seconds.
//!   Default `hop_length` 512 samples ≈ 23.2 ms.
//! - Pitch: MIDI 69 = A4 = `reference_hz` (440 Hz by default, ISO 16); cents are
//!   1200 · log2(f2/f1). An unvoiced frame has f0 = 0 Hz.
//!
//! ```
//! use collatio::audio::{analyse, AnalysisOptions};
//! // One second of A4 (440 Hz) at the analysis rate.
//! let sr = 22_050.0_f32;
//! let tone: Vec<f32> = (0..22_050)
//!     .map(|n| 0.5 * (2.0 * std::f32::consts::PI * 440.0 * n as f32 / sr).sin())
//!     .collect();
//! let analysis = analyse(&tone, &AnalysisOptions::default());
//! assert_eq!(analysis.notes.len(), 1);
//! assert!((analysis.notes[0].pitch - 69.0).abs() < 0.05);
//! ```

pub mod beats;
pub mod chroma;
pub mod decode;
pub mod eval;
pub mod melody;
pub mod notes;
pub mod pitch;
pub mod resample;
pub mod stft;

/// Signals shared by the unit tests of the analysis modules.
#[cfg(test)]
pub(crate) mod test_signals {
    /// A sine at `hz`, amplitude 0.5, sampled at 22,050 Hz for `seconds`.
    pub fn sine(hz: f64, seconds: f64) -> Vec<f32> {
        let sr = 22_050.0;
        (0..(seconds * sr) as usize)
            .map(|n| (0.5 * (2.0 * std::f64::consts::PI * hz * n as f64 / sr).sin()) as f32)
            .collect()
    }
}

use serde::Serialize;

/// Sample rate of the analysis in Hz (librosa's default rate; enough for f0 up to C8).
pub const ANALYSIS_RATE: u32 = 22_050;

/// Something wrong with an audio input or its analysis. Messages start with `audio:`.
#[derive(Debug, thiserror::Error)]
pub enum AudioError {
    /// The container could not be opened or recognised.
    #[error("audio: cannot open the {container} container: {reason}")]
    Container {
        /// The container as detected.
        container: &'static str,
        /// What the demuxer said.
        reason: String,
    },
    /// No audio track, or none with a codec collatio decodes.
    #[error("audio: unsupported codec: {0}")]
    UnsupportedCodec(String),
    /// Stream properties outside what collatio analyses.
    #[error("audio: {what} is {value}, outside the supported range {range}")]
    Unsupported {
        /// Which property.
        what: &'static str,
        /// Its value.
        value: String,
        /// The range collatio accepts.
        range: &'static str,
    },
    /// The stream is corrupt where decoding cannot go on.
    #[error("audio: corrupt stream at {at_seconds:.3} s: {reason}")]
    Corrupt {
        /// Position reached, in seconds of audio.
        at_seconds: f64,
        /// What the decoder said.
        reason: String,
    },
    /// The stream holds no samples (in the range asked for).
    #[error("audio: no audio samples{0}")]
    NoSamples(String),
    /// The audio is longer than the configured limit.
    #[error("audio: duration {seconds:.1} s is above the limit of {limit:.0} s (raise it with --max-audio-seconds)")]
    TooLong {
        /// Duration found or declared, in seconds.
        seconds: f64,
        /// The limit in force.
        limit: f64,
    },
    /// Silence, noise or unpitched sound only.
    #[error("audio: no melody was found: {0}")]
    NoMelody(String),
    /// An option value that cannot be used.
    #[error("audio: {0}")]
    Options(String),
}

/// Every parameter of the analysis. `Default` gives the documented defaults; the whole value
/// is serialisable so that a report can print the recipe verbatim.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct AnalysisOptions {
    /// Reference frequency of A4 (MIDI 69) in Hz. Default 440 (ISO 16).
    pub reference_hz: f64,
    /// Frame advance in samples at [`ANALYSIS_RATE`]. Default 512 (≈ 23.2 ms).
    pub hop_length: usize,
    /// STFT size for chroma and onset strength, in samples. Default 2048 (≈ 93 ms).
    pub n_fft: usize,
    /// Pitch tracking parameters.
    pub pitch: pitch::PyinOptions,
    /// Note segmentation parameters.
    pub notes: notes::NoteOptions,
    /// Beat tracking parameters.
    pub beats: beats::BeatOptions,
    /// Which tracker gives the melody. Default [`MelodySource::Auto`].
    pub melody_source: MelodySource,
    /// Predominant-melody parameters (for mixes).
    pub melody: melody::MelodyOptions,
}

/// Which f0 tracker gives a recording's melody.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum MelodySource {
    /// pYIN when the recording sounds like one line, the predominant melody otherwise:
    /// pYIN's mean voicing probability over its voiced frames is at least
    /// [`SOLO_VOICING`] for a single line.
    #[default]
    Auto,
    /// pYIN: one instrument or voice alone.
    Solo,
    /// The predominant melody of a mix ([`melody`]).
    Mix,
}

/// Mean pYIN voicing probability over voiced frames above which a recording is taken as a
/// single line. Measured on the renders in `tests/fixtures`: solo flute, violin, sax and choir
/// 0.915–0.980, the demo's solo renders 0.99; arrangements with accompaniment 0.39–0.85.
pub const SOLO_VOICING: f64 = 0.88;

impl Default for AnalysisOptions {
    fn default() -> Self {
        AnalysisOptions {
            reference_hz: 440.0,
            hop_length: 512,
            n_fft: 2048,
            pitch: pitch::PyinOptions::default(),
            notes: notes::NoteOptions::default(),
            beats: beats::BeatOptions::default(),
            melody_source: MelodySource::Auto,
            melody: melody::MelodyOptions::default(),
        }
    }
}

/// The result of [`analyse`].
#[derive(Debug, Clone, Serialize)]
pub struct Analysis {
    /// Sample rate of the analysed signal in Hz.
    pub sample_rate: u32,
    /// Frame advance in samples.
    pub hop_length: usize,
    /// Duration of the analysed signal in seconds.
    pub duration_seconds: f64,
    /// f0 per frame.
    pub pitch: pitch::PitchTrack,
    /// Transcribed notes, in time order, one at a time.
    pub notes: Vec<notes::AudioNote>,
    /// Chromagram with its tuning estimate.
    pub chroma: chroma::Chroma,
    /// Onset strength per frame (same frames as `pitch`).
    pub onset_strength: Vec<f32>,
    /// Tempo and beat times.
    pub beats: beats::BeatTrack,
    /// Which tracker gave `pitch`: `solo` (pYIN) or `mix` (predominant melody).
    pub melody_source: &'static str,
    /// pYIN's mean voicing probability over its voiced frames on up to three excerpts (the
    /// solo/mix decision; NaN when `melody_source` was not `auto`).
    pub solo_voicing: f64,
    /// Time spans in seconds where the melody extractor was unsure (mixes only).
    pub unsure: Vec<(f64, f64)>,
}

/// Analyses a mono signal at [`ANALYSIS_RATE`]: STFT, tuning and chroma, pYIN f0, notes and
/// beats. Deterministic; memory is linear in the signal length (the f0 decoder keeps two
/// bytes per pitch state per frame).
pub fn analyse(samples: &[f32], options: &AnalysisOptions) -> Analysis {
    let sr = ANALYSIS_RATE;
    let hop = options.hop_length.max(1);
    let n_fft = options.n_fft.max(16);
    let mut spectra = stft::Stft::new(n_fft, hop);
    // First pass over the STFT: tuning peaks and onset strength; the second computes chroma
    // with the tuning found (two passes keep memory independent of the spectrogram's size).
    let mut tuning = chroma::TuningEstimator::default();
    let mut onsets = beats::OnsetStrength::default();
    for k in 0..spectra.n_frames(samples.len()) {
        let power = spectra.power_frame(samples, k);
        tuning.push(power, sr, n_fft);
        onsets.push(power, sr, n_fft);
    }
    let onset_strength = onsets.values;
    let chroma = chroma::chroma_stft(&mut spectra, samples, sr, tuning.estimate());
    let solo_voicing = match options.melody_source {
        MelodySource::Auto => excerpt_voicing(samples, sr, hop, &options.pitch),
        MelodySource::Solo | MelodySource::Mix => f64::NAN,
    };
    let mix = match options.melody_source {
        MelodySource::Solo => false,
        MelodySource::Mix => true,
        MelodySource::Auto => solo_voicing < SOLO_VOICING,
    };
    let (track, unsure, melody_source) = if mix {
        let found = melody::predominant_melody(
            samples,
            sr,
            &melody::MelodyOptions {
                hop_length: hop,
                ..options.melody.clone()
            },
        );
        (found.track, found.unsure, "mix")
    } else {
        (
            pitch::pyin(samples, sr, hop, &options.pitch),
            Vec::new(),
            "solo",
        )
    };
    let notes = notes::transcribe(
        &track,
        &onset_strength,
        options.reference_hz,
        &options.notes,
    );
    let frame_rate = f64::from(sr) / hop as f64;
    let note_onsets: Vec<(usize, f32)> = notes
        .iter()
        .map(|n| {
            (
                (n.onset * frame_rate).round().max(0.0) as usize,
                n.confidence,
            )
        })
        .collect();
    let envelope = beats::beat_envelope(&onset_strength, &note_onsets, options.beats.note_weight);
    let beats = beats::track_beats(&envelope, sr, hop, &options.beats);
    Analysis {
        sample_rate: sr,
        hop_length: hop,
        duration_seconds: samples.len() as f64 / f64::from(sr),
        pitch: track,
        notes,
        chroma,
        onset_strength,
        beats,
        melody_source,
        solo_voicing,
        unsure,
    }
}

/// Seconds of each excerpt pYIN hears to decide between a single line and a mix.
const EXCERPT_SECONDS: f64 = 10.0;
/// Excerpts heard, evenly spread over the recording.
const EXCERPTS: usize = 3;

/// pYIN's mean voicing probability over its voiced frames, on up to three 10-second excerpts
/// spread over the recording (the whole of a short one): enough to tell one line from a mix
/// at a sixth of the cost of tracking three minutes (0 when nothing is voiced).
fn excerpt_voicing(samples: &[f32], sr: u32, hop: usize, options: &pitch::PyinOptions) -> f64 {
    let excerpt = (EXCERPT_SECONDS * f64::from(sr)) as usize;
    let ranges: Vec<(usize, usize)> = if samples.len() <= excerpt * EXCERPTS * 4 / 3 {
        vec![(0, samples.len())]
    } else {
        (0..EXCERPTS)
            .map(|k| {
                // Centres at 1/6, 3/6 and 5/6 of the recording.
                let centre = samples.len() * (2 * k + 1) / (2 * EXCERPTS);
                let start = centre.saturating_sub(excerpt / 2);
                (start, (start + excerpt).min(samples.len()))
            })
            .collect()
    };
    let (mut sum, mut count) = (0.0f64, 0usize);
    for (start, end) in ranges {
        let track = pitch::pyin(&samples[start..end], sr, hop, options);
        for (voiced, p) in track.voiced.iter().zip(&track.voiced_prob) {
            if *voiced {
                sum += f64::from(*p);
                count += 1;
            }
        }
    }
    if count == 0 {
        0.0
    } else {
        sum / count as f64
    }
}

/// MIDI pitch (fractional) of a frequency, with A4 = `reference_hz` = MIDI 69.
pub fn midi_of_hz(hz: f64, reference_hz: f64) -> f64 {
    69.0 + 12.0 * (hz / reference_hz).log2()
}

/// Frequency in Hz of a (fractional) MIDI pitch, with A4 = `reference_hz` = MIDI 69.
pub fn hz_of_midi(midi: f64, reference_hz: f64) -> f64 {
    reference_hz * 2f64.powf((midi - 69.0) / 12.0)
}
