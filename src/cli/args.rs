//! Command-line arguments as data, with a terse `-h` and a long `--help`.

use clap::{Args, Parser, Subcommand, ValueEnum};
use collatio::findings::CompareSettings;
use collatio::ingest::{BarRange, Limits, MelodyChoice, ReadOptions};
use std::path::PathBuf;

const EXIT_CODES: &str = "\
Exit codes:
  0  success
  1  the command ran, but some input was partly skipped (see the warnings)
  2  usage error (bad option, or a selection that matches nothing)
  3  input error (a file could not be read at all)";

/// Compare pieces of music for shared melodic material and document the evidence.
#[derive(Debug, Parser)]
#[command(
    name = "collatio",
    version,
    about = "Compare pieces of music for shared melodic material and document the evidence",
    long_about = "collatio reads MusicXML scores and MIDI files into one note-and-bar timeline \
                  so that melodies can be compared whatever their key, tempo or notation.",
    after_long_help = EXIT_CODES
)]
pub struct Cli {
    #[command(subcommand)]
    pub command: Command,
}

#[derive(Debug, Subcommand)]
pub enum Command {
    /// Show what a file holds and the melody read from it, bar by bar.
    #[command(
        long_about = "Show what a file holds: format, SHA-256, parts or tracks, tempo, meter and \
                      key, the melody chosen (and why), then its notes bar by bar with bar \
                      labels as printed, beats, concert pitch names (C4 = middle C) and \
                      durations in beats and seconds.",
        after_long_help = "Examples:
  collatio inspect demo/harbour-lights.musicxml
  collatio inspect song.mid --track 2 --channel 1 --bars 9-24
  collatio inspect score.mxl --part P2 --voice 1 --format json > melody.json
  collatio inspect score.musicxml --unfold-repeats
  collatio inspect recording.flac --meter 3/4 --downbeat 0.42 --export-midi melody.mid

Exit codes:
  0  success
  1  read with warnings (some content skipped or assumed; listed)
  2  usage error (bad option, or a selection that matches nothing)
  3  input error (the file could not be read)"
    )]
    Inspect(Box<InspectArgs>),
    /// Find the melodic passages two pieces share, and measure each.
    #[command(
        long_about = "Find every passage of melody that two pieces share, whatever their key, \
                      tempo or notation: local alignment over notes (Smith-Waterman with affine \
                      gaps, under all 12 transpositions, with fragmentation and consolidation of \
                      repeated notes). For each passage: the bars in both works as printed, the \
                      transposition, the tempo ratio, the score, the percent melodic identity and \
                      the aligned notes.",
        after_long_help = "Selection (--select-a, --select-b) takes comma-separated key=value \
pairs: part=ID|NAME|N, track=N, channel=N, staff=N, voice=V, bars=FIRST-LAST, percussion=yes.

Examples:
  collatio compare demo/harbour-lights.musicxml demo/paper-boats.musicxml
  collatio compare a.mid b.musicxml --select-a track=2 --select-b part=P1,voice=1
  collatio compare a.mxl b.mxl --select-b bars=17-40 --format json > findings.json
  collatio compare a.musicxml b.mid --pdf exhibit.pdf --json findings.json --export passages/ \
      --case-label 'Holloway v. Wren' --date 2025-06-01 --paper letter

Exit codes:
  0  success
  1  compared, but some input was read with warnings
  2  usage error (bad option, a selection that matches nothing, or an output that
     would overwrite an input)
  3  input error (a file could not be read), or an output file could not be written"
    )]
    Compare(Box<CompareArgs>),
    /// Build a reference corpus index of prior art.
    #[command(subcommand)]
    Corpus(CorpusCommand),
    /// Look for a melody in a corpus index: best matches with their passages.
    Search(Box<SearchArgs>),
}

#[derive(Debug, Args)]
pub struct CompareArgs {
    /// The first work (A): MusicXML, .mxl or MIDI.
    pub a: PathBuf,
    /// The second work (B), compared against A.
    pub b: PathBuf,

    /// Melody of A, e.g. part=P1,voice=1 or track=2,channel=1,bars=9-24.
    #[arg(long, value_name = "SPEC", help_heading = "SELECTION")]
    pub select_a: Option<SelectionSpec>,
    /// Melody of B, same form as --select-a.
    #[arg(long, value_name = "SPEC", help_heading = "SELECTION")]
    pub select_b: Option<SelectionSpec>,
    /// Unfold repeats and endings in both works.
    #[arg(long, help_heading = "INPUT")]
    pub unfold_repeats: bool,

    #[command(flatten)]
    pub alignment: AlignmentArgs,

    #[command(flatten)]
    pub statistics: StatisticsArgs,

    #[command(flatten)]
    pub harmony: HarmonyArgs,

    #[command(flatten)]
    pub audio: AudioArgs,

    #[command(flatten)]
    pub limits: LimitArgs,

    /// Output format.
    #[arg(long, value_enum, default_value_t = OutputFormat::Text, help_heading = "OUTPUT")]
    pub format: OutputFormat,

    #[command(flatten)]
    pub exhibit: ExhibitArgs,
}

/// Files written besides the listing: the PDF exhibit, the JSON record, passage exports.
#[derive(Debug, Args)]
pub struct ExhibitArgs {
    /// Write the PDF exhibit to FILE.
    #[arg(long, value_name = "FILE", help_heading = "OUTPUT")]
    pub pdf: Option<PathBuf>,
    /// Write the JSON record (as --format json prints it) to FILE.
    #[arg(long, value_name = "FILE", help_heading = "OUTPUT")]
    pub json: Option<PathBuf>,
    /// Write each passage as MusicXML and MIDI into DIR (created if missing).
    #[arg(long, value_name = "DIR", help_heading = "OUTPUT")]
    pub export: Option<PathBuf>,
    /// Paper size of the PDF.
    #[arg(long, value_enum, default_value_t = PaperArg::A4, help_heading = "OUTPUT")]
    pub paper: PaperArg,
    /// Case label printed on every page of the PDF.
    #[arg(long, value_name = "TEXT", help_heading = "OUTPUT")]
    pub case_label: Option<String>,
    /// Name of work A in the PDF and exports (default: its title, else its file name).
    #[arg(long, value_name = "TEXT", help_heading = "OUTPUT")]
    pub label_a: Option<String>,
    /// Name of work B in the PDF and exports.
    #[arg(long, value_name = "TEXT", help_heading = "OUTPUT")]
    pub label_b: Option<String>,
    /// Date printed on the PDF, YYYY-MM-DD (default: from SOURCE_DATE_EPOCH, else none).
    #[arg(long, value_name = "YYYY-MM-DD", help_heading = "OUTPUT")]
    pub date: Option<String>,
    /// Tonic of the common key passages are shown in (C, G, Eb, F#, ...).
    #[arg(long, value_name = "KEY", default_value = "C", help_heading = "OUTPUT")]
    pub common_key: String,
}

/// Paper sizes for --paper.
#[derive(Debug, Clone, Copy, ValueEnum)]
pub enum PaperArg {
    /// ISO A4, 210 x 297 mm.
    A4,
    /// US Letter, 8.5 x 11 in.
    Letter,
}

impl ExhibitArgs {
    /// Whether any file output was asked for.
    pub fn any(&self) -> bool {
        self.pdf.is_some() || self.json.is_some() || self.export.is_some()
    }

    /// The library's options and outputs; the date follows --date, else `source_date_epoch`.
    pub fn options(
        &self,
        source_date_epoch: Option<&str>,
    ) -> Result<
        (
            collatio::report::exhibit::ExhibitOptions,
            collatio::report::exhibit::Outputs,
        ),
        collatio::report::exhibit::ExhibitError,
    > {
        use collatio::report::exhibit::{resolve_date, ExhibitError, ExhibitOptions, Outputs};
        if collatio::theory::parse_tonic(&self.common_key).is_none() {
            return Err(ExhibitError::BadKey(self.common_key.clone()));
        }
        let options = ExhibitOptions {
            paper: match self.paper {
                PaperArg::A4 => collatio::report::pdf::layout::Paper::A4,
                PaperArg::Letter => collatio::report::pdf::layout::Paper::Letter,
            },
            case_label: self.case_label.clone(),
            label_a: self.label_a.clone(),
            label_b: self.label_b.clone(),
            date: resolve_date(self.date.as_deref(), source_date_epoch)?,
            common_key: self.common_key.clone(),
            piano_roll: false,
        };
        let outputs = Outputs {
            pdf: self.pdf.clone(),
            json: self.json.clone(),
            export_dir: self.export.clone(),
        };
        Ok((options, outputs))
    }
}

/// Harmonic evidence and the alignment of a recording to a score.
#[derive(Debug, Args)]
pub struct HarmonyArgs {
    /// Leave out the harmonic (chroma) comparison.
    #[arg(long, help_heading = "HARMONY")]
    pub no_harmony: bool,
    /// Shuffled recurrence plots behind each harmonic passage's p-value.
    #[arg(long, default_value_t = 99, value_name = "N", help_heading = "HARMONY")]
    pub harmony_shuffles: usize,
    /// Largest p-value of a harmonic passage reported.
    #[arg(
        long,
        default_value_t = 0.05,
        value_name = "P",
        help_heading = "HARMONY"
    )]
    pub harmony_max_p: f64,
    /// Keep a recording's beat-tracked bars even when it follows the score it is compared
    /// with (by default the score's bars are put onto the recording by chroma alignment).
    #[arg(long, help_heading = "HARMONY")]
    pub keep_recording_bars: bool,
}

impl HarmonyArgs {
    /// The library parameters of the harmonic comparison, `None` when it is left out.
    pub fn params(&self) -> Result<Option<collatio::align::harmony::HarmonyParams>, UsageError> {
        if !(0.0..=1.0).contains(&self.harmony_max_p) {
            return Err(UsageError(
                "--harmony-max-p must lie between 0 and 1".into(),
            ));
        }
        Ok(
            (!self.no_harmony).then(|| collatio::align::harmony::HarmonyParams {
                shuffles: self.harmony_shuffles,
                max_p: self.harmony_max_p,
                ..collatio::align::harmony::HarmonyParams::default()
            }),
        )
    }

    /// The score-following parameters, `None` when a recording keeps its own bars.
    pub fn sync_params(&self) -> Option<collatio::align::sync::SyncParams> {
        (!self.keep_recording_bars).then(collatio::align::sync::SyncParams::default)
    }
}

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

/// The null model of unrelated melodies.
#[derive(Debug, Args)]
pub struct StatisticsArgs {
    /// Shuffled pairs scored for the null model (0 = no E-values).
    #[arg(
        long,
        default_value_t = 100,
        value_name = "N",
        help_heading = "STATISTICS"
    )]
    pub shuffles: usize,
    /// Seed of the shuffles' random generator.
    #[arg(long, default_value_t = 20_261_201, help_heading = "STATISTICS")]
    pub seed: u64,
    /// Runs of consecutive pitches the shuffles keep, 2 to 8: 4 is calibrated on unrelated
    /// real tunes; shorter runs let the shuffles reorder a melody with few repeated figures
    /// more freely, at the price of more chance agreement between idiomatic melodies.
    #[arg(
        long,
        default_value_t = 4,
        value_name = "K",
        value_parser = clap::value_parser!(u8).range(2..=8),
        help_heading = "STATISTICS"
    )]
    pub shuffle_runs: u8,
    /// Corpus index (from `collatio corpus build`): how common each passage's figure is, and a
    /// corpus-weighted similarity.
    #[arg(long, value_name = "FILE", help_heading = "STATISTICS")]
    pub corpus: Option<PathBuf>,
}

impl StatisticsArgs {
    /// The library parameters.
    pub fn null_params(&self) -> collatio::stats::null::NullParams {
        collatio::stats::null::NullParams {
            shuffles: self.shuffles,
            seed: self.seed,
            run_length: usize::from(self.shuffle_runs),
        }
    }
}

/// Scoring of the alignment, in points per note pair.
#[derive(Debug, Args)]
pub struct AlignmentArgs {
    /// Points for the same pitch class after transposing.
    #[arg(
        long,
        default_value_t = 8,
        allow_negative_numbers = true,
        help_heading = "ALIGNMENT"
    )]
    pub pitch_match: i32,
    /// Points for a pitch one semitone off.
    #[arg(long, default_value_t = -4, allow_negative_numbers = true, help_heading = "ALIGNMENT")]
    pub pitch_near: i32,
    /// Points for any other pitch.
    #[arg(long, default_value_t = -8, allow_negative_numbers = true, help_heading = "ALIGNMENT")]
    pub pitch_mismatch: i32,
    /// Points for the same interval into both notes.
    #[arg(
        long,
        default_value_t = 4,
        allow_negative_numbers = true,
        help_heading = "ALIGNMENT"
    )]
    pub interval_match: i32,
    /// Points for intervals in one direction within two semitones.
    #[arg(
        long,
        default_value_t = 0,
        allow_negative_numbers = true,
        help_heading = "ALIGNMENT"
    )]
    pub interval_near: i32,
    /// Points for other intervals.
    #[arg(long, default_value_t = -4, allow_negative_numbers = true, help_heading = "ALIGNMENT")]
    pub interval_mismatch: i32,
    /// Points for the same rhythm (inter-onset ratio to the previous note).
    #[arg(
        long,
        default_value_t = 2,
        allow_negative_numbers = true,
        help_heading = "ALIGNMENT"
    )]
    pub rhythm_match: i32,
    /// Points for rhythms within a factor of two.
    #[arg(
        long,
        default_value_t = 0,
        allow_negative_numbers = true,
        help_heading = "ALIGNMENT"
    )]
    pub rhythm_near: i32,
    /// Points for other rhythms.
    #[arg(long, default_value_t = -3, allow_negative_numbers = true, help_heading = "ALIGNMENT")]
    pub rhythm_mismatch: i32,
    /// Points for the same metric level (downbeat, strong, weak, off-beat).
    #[arg(
        long,
        default_value_t = 1,
        allow_negative_numbers = true,
        help_heading = "ALIGNMENT"
    )]
    pub metric_match: i32,
    /// Cost of opening a gap (one unmatched note).
    #[arg(long, default_value_t = 16, help_heading = "ALIGNMENT")]
    pub gap_open: i32,
    /// Cost of each further unmatched note in a gap.
    #[arg(long, default_value_t = 8, help_heading = "ALIGNMENT")]
    pub gap_extend: i32,
    /// Cost per extra note when one note is split into repeated notes.
    #[arg(long, default_value_t = 2, help_heading = "ALIGNMENT")]
    pub fragment_penalty: i32,
    /// Most repeated notes one note may be split into (1 = no splitting, at most 3).
    #[arg(long, default_value_t = 3, value_parser = clap::value_parser!(u8).range(1..=3), help_heading = "ALIGNMENT")]
    pub max_fragments: u8,
    /// Lowest score reported as a passage.
    #[arg(long, default_value_t = 60, help_heading = "ALIGNMENT")]
    pub min_score: i32,
    /// Fewest notes on each side of a passage.
    #[arg(long, default_value_t = 5, help_heading = "ALIGNMENT")]
    pub min_notes: usize,
    /// Most passages reported.
    #[arg(long, default_value_t = 20, help_heading = "ALIGNMENT")]
    pub max_passages: usize,
}

impl AlignmentArgs {
    /// The library parameters.
    pub fn params(&self) -> collatio::align::AlignParams {
        collatio::align::AlignParams {
            pitch_match: self.pitch_match,
            pitch_near: self.pitch_near,
            pitch_mismatch: self.pitch_mismatch,
            interval_match: self.interval_match,
            interval_near: self.interval_near,
            interval_mismatch: self.interval_mismatch,
            rhythm_match: self.rhythm_match,
            rhythm_near: self.rhythm_near,
            rhythm_mismatch: self.rhythm_mismatch,
            metric_match: self.metric_match,
            gap_open: self.gap_open,
            gap_extend: self.gap_extend,
            fragment_penalty: self.fragment_penalty,
            max_fragments: usize::from(self.max_fragments),
            min_score: self.min_score,
            min_notes: self.min_notes,
            max_passages: self.max_passages,
        }
    }
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

#[derive(Debug, Clone, Copy, ValueEnum)]
pub enum OutputFormat {
    /// A listing for people.
    Text,
    /// The JSON record documented in docs/inspect-json.md.
    Json,
}

#[derive(Debug, Args)]
pub struct InspectArgs {
    /// MusicXML (.musicxml, .xml, .mxl), MIDI (.mid) or audio (WAV, FLAC, MP3, Ogg Vorbis,
    /// AAC/M4A, AIFF) file; the format is read from the content.
    pub file: PathBuf,

    #[command(flatten)]
    pub selection: SelectionArgs,

    /// Unfold repeats and first/second endings into performance order.
    #[arg(long, help_heading = "INPUT")]
    pub unfold_repeats: bool,

    #[command(flatten)]
    pub audio: AudioArgs,

    #[command(flatten)]
    pub limits: LimitArgs,

    /// Output format.
    #[arg(long, value_enum, default_value_t = OutputFormat::Text, help_heading = "OUTPUT")]
    pub format: OutputFormat,

    /// Also write the melody as a Standard MIDI File (e.g. a transcription to correct).
    #[arg(long, value_name = "FILE.mid", help_heading = "OUTPUT")]
    pub export_midi: Option<PathBuf>,
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
    #[arg(long, value_name = "SECONDS", help_heading = "AUDIO")]
    pub from: Option<f64>,
    /// Analyse audio up to this time, in seconds.
    #[arg(long, value_name = "SECONDS", help_heading = "AUDIO")]
    pub to: Option<f64>,
    /// Meter of the recording, e.g. 3/4 (bars are estimated; 4/4 when not given).
    #[arg(long, value_name = "N/D", help_heading = "AUDIO")]
    pub meter: Option<Meter>,
    /// Time of a downbeat in the recording, in seconds (estimated when not given).
    #[arg(long, value_name = "SECONDS", help_heading = "AUDIO")]
    pub downbeat: Option<f64>,
    /// Expected tempo in beats per minute: the tempo estimate then keeps to within about a
    /// third of it, which settles the metrical level (eighths or quarters); the beats still
    /// come from the recording.
    #[arg(long, value_name = "BPM", help_heading = "AUDIO")]
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
    #[arg(
        long,
        default_value_t = 440.0,
        value_name = "HZ",
        help_heading = "AUDIO"
    )]
    pub a4: f64,
    /// Lowest melody pitch searched, in Hz (default B1).
    #[arg(
        long,
        default_value_t = 61.735,
        value_name = "HZ",
        help_heading = "AUDIO"
    )]
    pub fmin: f64,
    /// Highest melody pitch searched, in Hz (default C#7).
    #[arg(
        long,
        default_value_t = 2217.461,
        value_name = "HZ",
        help_heading = "AUDIO"
    )]
    pub fmax: f64,
    /// Longest audio analysed, in seconds.
    #[arg(
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
    #[arg(long, help_heading = "SELECTION")]
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
    #[arg(
        long,
        default_value_t = 256,
        value_name = "MIB",
        help_heading = "LIMITS"
    )]
    pub max_file_mb: u64,
    /// Largest decompressed entry of an .mxl container, in MiB.
    #[arg(
        long,
        default_value_t = 256,
        value_name = "MIB",
        help_heading = "LIMITS"
    )]
    pub max_decompressed_mb: u64,
    /// Most entries in an .mxl container.
    #[arg(
        long,
        default_value_t = 10_000,
        value_name = "N",
        help_heading = "LIMITS"
    )]
    pub max_archive_entries: u64,
    /// Most notes in one file.
    #[arg(
        long,
        default_value_t = 2_000_000,
        value_name = "N",
        help_heading = "LIMITS"
    )]
    pub max_notes: u64,
    /// Most bars in one file (after unfolding repeats).
    #[arg(
        long,
        default_value_t = 100_000,
        value_name = "N",
        help_heading = "LIMITS"
    )]
    pub max_bars: u64,
}

/// An option combination that clap cannot reject by itself.
#[derive(Debug, thiserror::Error)]
#[error("{0}")]
pub struct UsageError(pub String);

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

impl CompareArgs {
    /// Every analysis setting, validated.
    pub fn settings(&self) -> Result<CompareSettings, UsageError> {
        Ok(CompareSettings {
            align: self.alignment.params(),
            null: self.statistics.null_params(),
            harmony: self.harmony.params()?,
            sync: self.harmony.sync_params(),
        })
    }

    /// Reading options for A and B.
    pub fn read_options(&self) -> Result<(ReadOptions, ReadOptions), UsageError> {
        let audio = self.audio.options()?;
        let make = |spec: &Option<SelectionSpec>| ReadOptions {
            limits: self.limits.limits(),
            choice: spec.clone().unwrap_or_default().0,
            unfold_repeats: self.unfold_repeats,
            audio: audio.clone(),
        };
        Ok((make(&self.select_a), make(&self.select_b)))
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
            unfold_repeats: self.unfold_repeats,
            audio: self.audio.options()?,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use clap::CommandFactory;

    #[test]
    fn command_definition_is_consistent() {
        Cli::command().debug_assert();
    }
}

/// Working with a corpus index.
#[derive(Debug, Subcommand)]
pub enum CorpusCommand {
    /// Read every MIDI, MusicXML and audio file under a folder and write an index.
    #[command(after_long_help = "Examples:
  collatio corpus build demo/corpus -o target/demo/corpus.idx
  collatio search new-song.musicxml --corpus target/demo/corpus.idx")]
    Build(BuildArgs),
}

/// `corpus build`.
#[derive(Debug, Args)]
pub struct BuildArgs {
    /// Folder to read (recursively; hidden files and folders are skipped).
    pub dir: PathBuf,
    /// Index file to write (atomically; never over an input).
    #[arg(short, long, value_name = "FILE")]
    pub output: PathBuf,
    #[command(flatten)]
    pub limits: LimitArgs,
}

/// `search`.
#[derive(Debug, Args)]
pub struct SearchArgs {
    /// The melody to look for: MusicXML, .mxl, MIDI or audio.
    pub query: PathBuf,
    /// Corpus index written by `collatio corpus build`.
    #[arg(long, value_name = "FILE")]
    pub corpus: PathBuf,
    /// Melody of the query, e.g. part=P1,bars=9-16.
    #[arg(long, value_name = "SPEC", help_heading = "SELECTION")]
    pub select: Option<SelectionSpec>,
    /// Best matches listed.
    #[arg(long, default_value_t = 10, help_heading = "SEARCH")]
    pub top: usize,
    /// Candidates retrieved by shared figures and then aligned in full (raise it to look
    /// deeper in corpora full of near-duplicates; each costs one full alignment).
    #[arg(long, default_value_t = 20, help_heading = "SEARCH")]
    pub candidates: usize,
    #[command(flatten)]
    pub alignment: AlignmentArgs,
    #[command(flatten)]
    pub limits: LimitArgs,
    /// Output format.
    #[arg(long, value_enum, default_value_t = OutputFormat::Text, help_heading = "OUTPUT")]
    pub format: OutputFormat,
}
