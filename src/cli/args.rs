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
  collatio inspect demo/lantern-waltz.musicxml
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
    #[arg(long, default_value_t = 256, value_name = "MIB", help_heading = "LIMITS")]
    pub max_file_mb: u64,
    /// Largest decompressed entry of an .mxl container, in MiB.
    #[arg(long, default_value_t = 256, value_name = "MIB", help_heading = "LIMITS")]
    pub max_decompressed_mb: u64,
    /// Most entries in an .mxl container.
    #[arg(long, default_value_t = 10_000, value_name = "N", help_heading = "LIMITS")]
    pub max_archive_entries: u64,
    /// Most notes in one file.
    #[arg(long, default_value_t = 2_000_000, value_name = "N", help_heading = "LIMITS")]
    pub max_notes: u64,
    /// Most bars in one file (after unfolding repeats).
    #[arg(long, default_value_t = 100_000, value_name = "N", help_heading = "LIMITS")]
    pub max_bars: u64,
}

/// An option combination that clap cannot reject by itself.
#[derive(Debug, thiserror::Error)]
#[error("{0}")]
pub struct UsageError(pub String);

impl InspectArgs {
    /// Validates the arguments once into library options.
    pub fn read_options(&self) -> Result<ReadOptions, UsageError> {
        let s = &self.selection;
        if s.part.is_some() && (s.track.is_some() || s.channel.is_some()) {
            return Err(UsageError(
                "--part names one part; do not combine it with --track or --channel".into(),
            ));
        }
        let mib = |v: u64| v.saturating_mul(1 << 20);
        Ok(ReadOptions {
            limits: Limits {
                max_file_bytes: mib(self.limits.max_file_mb),
                max_decompressed_bytes: mib(self.limits.max_decompressed_mb),
                max_archive_entries: self.limits.max_archive_entries,
                max_notes: self.limits.max_notes,
                max_bars: self.limits.max_bars,
            },
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
