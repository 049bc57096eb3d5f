//! Options of the inputs: which line is the melody, how recordings are analysed, size limits,
//! and `inspect`.

use super::error::UsageError;
use super::output::OutputFormat;
use clap::Args;
use collatio::ingest::{BarRange, Limits, MelodyChoice, ReadOptions};
use std::path::PathBuf;

/// `--audio-melody` values.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum MelodySourceArg {
    /// pYIN for one line, the predominant melody for a mix (decided from pYIN's voicing).
    Auto,
    /// One instrument or voice alone: pYIN.
    Solo,
    /// A full arrangement: the predominant melody.
    Mix,
}

/// A per-work selection written as key=value pairs.
#[derive(Debug, Clone, Default)]
pub struct SelectionSpec(pub MelodyChoice);

impl std::str::FromStr for SelectionSpec {
    type Err = String;

    fn from_str(text: &str) -> Result<Self, Self::Err> {
        let mut choice = MelodyChoice::default();
        for item in text.split(',').map(str::trim).filter(|s| !s.is_empty()) {
            let (key, value) = item
                .split_once('=')
                .ok_or_else(|| format!("'{item}' should be key=value, e.g. part=P1"))?;
            let value = value.trim();
            let number = |what: &str| {
                value
                    .parse::<u32>()
                    .map_err(|_| format!("{what} wants a number, got '{value}'"))
            };
            match key.trim() {
                "part" => choice.part = Some(value.to_string()),
                "track" => choice.track = Some(number("track")?),
                "channel" => {
                    let c = number("channel")?;
                    if !(1..=16).contains(&c) {
                        return Err(format!("channel must be 1-16, got {c}"));
                    }
                    choice.channel = Some(c as u8);
                }
                "staff" => choice.staff = Some(number("staff")?.clamp(1, 255) as u8),
                "voice" => choice.voice = Some(value.to_string()),
                "bars" => choice.bars = Some(value.parse()?),
                "percussion" => choice.include_percussion = matches!(value, "yes" | "true" | "1"),
                other => {
                    return Err(format!(
                        "unknown key '{other}'; use part, track, channel, staff, voice, bars or percussion"
                    ))
                }
            }
        }
        if choice.part.is_some() && (choice.track.is_some() || choice.channel.is_some()) {
            return Err("part names one part; do not combine it with track or channel".into());
        }
        Ok(SelectionSpec(choice))
    }
}

#[derive(Debug, Args)]
pub struct InspectArgs {
    /// MusicXML (.musicxml, .xml, .mxl), MIDI (.mid) or audio (WAV, FLAC, MP3, Ogg Vorbis,
    /// AAC/M4A, AIFF) file; the format is read from the content.
    pub file: PathBuf,

    #[command(flatten)]
    pub selection: SelectionArgs,

    /// Read in performance order: repeats played out, first and second endings taken in turn.
    #[arg(long, help_heading = "INPUT")]
    pub performance_order: bool,

    #[command(flatten)]
    pub audio: AudioArgs,

    #[command(flatten)]
    pub limits: LimitArgs,

    /// Output format.
    #[arg(long, value_enum, default_value_t = OutputFormat::Text, help_heading = "OUTPUT")]
    pub format: OutputFormat,

    /// Also write the melody as a Standard MIDI File (e.g. a transcription to correct); `-`
    /// writes it to standard output in place of the listing.
    #[arg(long, value_name = "FILE.mid", help_heading = "OUTPUT")]
    pub export_midi: Option<PathBuf>,

    #[command(flatten)]
    pub paths: super::PathArgs,

    #[command(flatten)]
    pub progress: super::ProgressArgs,
}

/// A meter written as N/D, e.g. 3/4 or 6/8.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Meter(pub u32, pub u32);

impl std::str::FromStr for Meter {
    type Err = String;

    fn from_str(text: &str) -> Result<Self, Self::Err> {
        let (n, d) = text
            .trim()
            .split_once('/')
            .ok_or_else(|| format!("meter '{text}' should look like 3/4 or 6/8"))?;
        let n: u32 = n
            .trim()
            .parse()
            .map_err(|_| format!("meter '{text}': '{n}' is not a number of beats"))?;
        let d: u32 = d
            .trim()
            .parse()
            .map_err(|_| format!("meter '{text}': '{d}' is not a beat unit"))?;
        if n == 0 || n > 64 || !matches!(d, 1 | 2 | 4 | 8 | 16 | 32) {
            return Err(format!(
                "meter '{text}': beats must be 1-64 and the unit 1, 2, 4, 8, 16 or 32"
            ));
        }
        Ok(Meter(n, d))
    }
}

/// How audio recordings are decoded and analysed (ignored for scores and MIDI).
#[derive(Debug, Args)]
pub struct AudioArgs {
    /// Analyse audio from this time on, in seconds.
    #[arg(value_parser = super::ranges::number(0.0, 86_400.0), long, value_name = "SECONDS", help_heading = "AUDIO")]
    pub from: Option<f64>,
    /// Analyse audio up to this time, in seconds.
    #[arg(value_parser = super::ranges::number(0.0, 86_400.0), long, value_name = "SECONDS", help_heading = "AUDIO")]
    pub to: Option<f64>,
    /// Meter of the recording, e.g. 3/4 (bars are estimated; 4/4 when not given).
    #[arg(long, value_name = "N/D", help_heading = "AUDIO")]
    pub meter: Option<Meter>,
    /// Time of a downbeat in the recording, in seconds (estimated when not given).
    #[arg(value_parser = super::ranges::number(0.0, 86_400.0), long, value_name = "SECONDS", help_heading = "AUDIO")]
    pub downbeat: Option<f64>,
    /// Expected tempo in beats per minute: the tempo estimate then keeps to within about a
    /// third of it, which settles the metrical level (eighths or quarters); the beats still
    /// come from the recording.
    #[arg(value_parser = super::ranges::number(20.0, 400.0), long, value_name = "BPM", help_heading = "AUDIO")]
    pub tempo: Option<f64>,
    /// Where a recording's melody comes from: `auto` (one line → pYIN, a mix → predominant
    /// melody), `solo` or `mix`.
    #[arg(
        long,
        value_enum,
        default_value_t = MelodySourceArg::Auto,
        value_name = "KIND",
        help_heading = "AUDIO"
    )]
    pub audio_melody: MelodySourceArg,
    /// Frequency of A4 (MIDI 69) used to name pitches, in Hz.
    #[arg(value_parser = super::ranges::number(220.0, 880.0),
        long,
        default_value_t = 440.0,
        value_name = "HZ",
        help_heading = "AUDIO"
    )]
    pub a4: f64,
    /// Lowest melody pitch searched, in Hz (default B1).
    #[arg(value_parser = super::ranges::number(20.0, 20_000.0),
        long,
        default_value_t = 61.735,
        value_name = "HZ",
        help_heading = "AUDIO"
    )]
    pub fmin: f64,
    /// Highest melody pitch searched, in Hz (default C#7).
    #[arg(value_parser = super::ranges::number(20.0, 20_000.0),
        long,
        default_value_t = 2217.461,
        value_name = "HZ",
        help_heading = "AUDIO"
    )]
    pub fmax: f64,
    /// Longest audio analysed, in seconds.
    #[arg(value_parser = super::ranges::number(0.01, 86_400.0),
        long,
        default_value_t = 1800.0,
        value_name = "SECONDS",
        help_heading = "LIMITS"
    )]
    pub max_audio_seconds: f64,
}

impl AudioArgs {
    /// Validates the audio options into library options.
    pub fn options(&self) -> Result<collatio::ingest::audio::AudioReadOptions, UsageError> {
        let finite_positive = |v: f64| v.is_finite() && v > 0.0;
        if !finite_positive(self.a4) || !finite_positive(self.fmin) || !finite_positive(self.fmax) {
            return Err(UsageError(
                "--a4, --fmin and --fmax must be positive frequencies in Hz".into(),
            ));
        }
        if self.fmax <= self.fmin * 1.06 {
            return Err(UsageError(format!(
                "--fmax ({} Hz) must be at least a semitone above --fmin ({} Hz)",
                self.fmax, self.fmin
            )));
        }
        for (name, value) in [
            ("--from", self.from),
            ("--to", self.to),
            ("--downbeat", self.downbeat),
        ] {
            if value.is_some_and(|v| !v.is_finite() || v < 0.0) {
                return Err(UsageError(format!(
                    "{name} must be a non-negative number of seconds"
                )));
            }
        }
        if self
            .tempo
            .is_some_and(|t| !t.is_finite() || !(20.0..=400.0).contains(&t))
        {
            return Err(UsageError(
                "--tempo must be a number of beats per minute from 20 to 400".into(),
            ));
        }
        if let (Some(a), Some(b)) = (self.from, self.to) {
            if b <= a {
                return Err(UsageError(format!("--to ({b}) must be after --from ({a})")));
            }
        }
        if !finite_positive(self.max_audio_seconds) {
            return Err(UsageError(
                "--max-audio-seconds must be a positive number".into(),
            ));
        }
        let mut options = collatio::ingest::audio::AudioReadOptions::default();
        options.decode.from = self.from;
        options.decode.to = self.to;
        options.decode.max_seconds = self.max_audio_seconds;
        options.meter = self.meter.map(|m| (m.0, m.1));
        options.downbeat = self.downbeat;
        options.analysis.beats.tempo_hint = self.tempo;
        options.analysis.reference_hz = self.a4;
        options.analysis.melody_source = match self.audio_melody {
            MelodySourceArg::Auto => collatio::audio::MelodySource::Auto,
            MelodySourceArg::Solo => collatio::audio::MelodySource::Solo,
            MelodySourceArg::Mix => collatio::audio::MelodySource::Mix,
        };
        options.analysis.pitch.fmin = self.fmin;
        options.analysis.pitch.fmax = self.fmax;
        Ok(options)
    }
}

/// Which line of the file is the melody.
#[derive(Debug, Args)]
pub struct SelectionArgs {
    /// Part by id (P1, track2-ch1), name, or position from 1.
    #[arg(long, help_heading = "SELECTION")]
    pub part: Option<String>,
    /// MIDI track, counted from 1.
    #[arg(value_parser = clap::value_parser!(u32).range(1..=65_535), long, help_heading = "SELECTION")]
    pub track: Option<u32>,
    /// MIDI channel, 1-16.
    #[arg(long, value_parser = clap::value_parser!(u8).range(1..=16), help_heading = "SELECTION")]
    pub channel: Option<u8>,
    /// Staff within the part, counted from 1.
    #[arg(long, value_parser = clap::value_parser!(u8).range(1..), help_heading = "SELECTION")]
    pub staff: Option<u8>,
    /// Voice within the part, as the score numbers it.
    #[arg(long, help_heading = "SELECTION")]
    pub voice: Option<String>,
    /// Bar range by printed labels, e.g. 9-24 or 12a-16.
    #[arg(long, value_name = "FIRST-LAST", help_heading = "SELECTION")]
    pub bars: Option<BarRange>,
    /// Allow a percussion part (MIDI channel 10) to be chosen automatically.
    #[arg(long, help_heading = "SELECTION")]
    pub include_percussion: bool,
}

/// Limits on input size; raise them for unusually large files.
#[derive(Debug, Args)]
pub struct LimitArgs {
    /// Largest input file, in MiB.
    #[arg(value_parser = clap::value_parser!(u64).range(1..=1 << 20),
        long,
        default_value_t = 256,
        value_name = "MIB",
        help_heading = "LIMITS"
    )]
    pub max_file_mb: u64,
    /// Largest decompressed entry of an .mxl container, in MiB.
    #[arg(value_parser = clap::value_parser!(u64).range(1..=1 << 16),
        long,
        default_value_t = 256,
        value_name = "MIB",
        help_heading = "LIMITS"
    )]
    pub max_decompressed_mb: u64,
    /// Most entries in an .mxl container.
    #[arg(value_parser = clap::value_parser!(u64).range(1..=10_000_000),
        long,
        default_value_t = 10_000,
        value_name = "N",
        help_heading = "LIMITS"
    )]
    pub max_archive_entries: u64,
    /// Most notes in one file.
    #[arg(value_parser = clap::value_parser!(u64).range(1..=super::ranges::MAX_NOTES),
        long,
        default_value_t = 2_000_000,
        value_name = "N",
        help_heading = "LIMITS"
    )]
    pub max_notes: u64,
    /// Most bars in one file (in performance order when that is asked for).
    #[arg(value_parser = clap::value_parser!(u64).range(1..=10_000_000),
        long,
        default_value_t = 100_000,
        value_name = "N",
        help_heading = "LIMITS"
    )]
    pub max_bars: u64,
}

impl LimitArgs {
    /// The library limits.
    pub fn limits(&self) -> Limits {
        let mib = |v: u64| v.saturating_mul(1 << 20);
        Limits {
            max_file_bytes: mib(self.max_file_mb),
            max_decompressed_bytes: mib(self.max_decompressed_mb),
            max_archive_entries: self.max_archive_entries,
            max_notes: self.max_notes,
            max_bars: self.max_bars,
        }
    }
}

impl InspectArgs {
    /// Validates the arguments once into library options.
    pub fn read_options(&self) -> Result<ReadOptions, UsageError> {
        let s = &self.selection;
        if s.part.is_some() && (s.track.is_some() || s.channel.is_some()) {
            return Err(UsageError(
                "--part names one part; do not combine it with --track or --channel".into(),
            ));
        }
        Ok(ReadOptions {
            limits: self.limits.limits(),
            choice: MelodyChoice {
                part: s.part.clone(),
                track: s.track,
                channel: s.channel,
                staff: s.staff,
                voice: s.voice.clone(),
                bars: s.bars.clone(),
                include_percussion: s.include_percussion,
            },
            unfold_repeats: self.performance_order,
            audio: self.audio.options()?,
        })
    }
}
