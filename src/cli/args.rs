//! Command-line arguments as data, with a terse `-h` and a long `--help`.

use clap::{Args, Parser, Subcommand, ValueEnum};
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

Exit codes:
  0  success
  1  read with warnings (some content skipped or assumed; listed)
  2  usage error (bad option, or a selection that matches nothing)
  3  input error (the file could not be read)"
    )]
    Inspect(InspectArgs),
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

Exit codes:
  0  success
  1  compared, but some input was read with warnings
  2  usage error (bad option, or a selection that matches nothing)
  3  input error (a file could not be read)"
    )]
    Compare(Box<CompareArgs>),
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
    pub limits: LimitArgs,

    /// Output format.
    #[arg(long, value_enum, default_value_t = OutputFormat::Text, help_heading = "OUTPUT")]
    pub format: OutputFormat,
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
    /// MusicXML (.musicxml, .xml, .mxl) or MIDI (.mid) file; the format is read from the content.
    pub file: PathBuf,

    #[command(flatten)]
    pub selection: SelectionArgs,

    /// Unfold repeats and first/second endings into performance order.
    #[arg(long, help_heading = "INPUT")]
    pub unfold_repeats: bool,

    #[command(flatten)]
    pub limits: LimitArgs,

    /// Output format.
    #[arg(long, value_enum, default_value_t = OutputFormat::Text, help_heading = "OUTPUT")]
    pub format: OutputFormat,
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
    /// Reading options for A and B.
    pub fn read_options(&self) -> (ReadOptions, ReadOptions) {
        let make = |spec: &Option<SelectionSpec>| ReadOptions {
            limits: self.limits.limits(),
            choice: spec.clone().unwrap_or_default().0,
            unfold_repeats: self.unfold_repeats,
        };
        (make(&self.select_a), make(&self.select_b))
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
