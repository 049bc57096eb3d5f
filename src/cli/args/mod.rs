//! Command-line arguments as data, with a terse `-h` and a long `--help`.

mod analysis;
mod corpus;
mod error;
mod input;
mod output;
mod ranges;

pub use analysis::{AlignmentArgs, HarmonyArgs, StatisticsArgs};
pub use corpus::{BuildArgs, CorpusCommand, SearchArgs, VerifyArgs};
pub use error::UsageError;
pub use input::{AudioArgs, InspectArgs, LimitArgs, SelectionSpec};
pub use output::{ExhibitArgs, OutputFormat, PathArgs, ProgressArgs};

use clap::{Args, Parser, Subcommand};
use collatio::findings::CompareSettings;
use collatio::ingest::ReadOptions;
use std::path::PathBuf;

const EXIT_CODES: &str = "\
Exit codes:
  0  success
  1  the command ran, but some input was partly skipped (see the warnings)
  2  usage error (an option outside its range, a selection that matches nothing, or an
     output that would replace an input or something that is not a regular file)
  3  input error (a file could not be read at all: damaged, nested too deep, not a regular
     file, a corrupt index)";

/// Compare pieces of music for shared melodic material and document the evidence.
#[derive(Debug, Parser)]
#[command(
    name = "collatio",
    version,
    about = "Compare scores, MIDI files and recordings for shared melodic material and document the evidence",
    long_about = "collatio reads MusicXML scores, MIDI files and audio recordings (WAV, FLAC, \
                  MP3, Ogg Vorbis, AAC/M4A, AIFF) into one note-and-bar timeline so that \
                  melodies can be compared whatever their key, tempo or notation, and writes \
                  the evidence up as a reproducible exhibit for a qualified expert. Similarity \
                  is not proof of copying; the findings defer to qualified legal counsel.",
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
  collatio inspect demo/pierside-lamps.musicxml
  collatio inspect song.mid --track 2 --channel 1 --bars 9-24
  collatio inspect score.mxl --part P2 --voice 1 --format json > melody.json
  collatio inspect score.musicxml --performance-order
  collatio inspect recording.flac --meter 3/4 --downbeat 0.42 --export-midi melody.mid

Exit codes:
  0  success
  1  read with warnings (some content skipped or assumed; listed)
  2  usage error (an option outside its range, or a selection that matches nothing)
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
  collatio compare demo/pierside-lamps.musicxml demo/millstream-boats.musicxml
  collatio compare a.mid b.musicxml --select-a track=2 --select-b part=P1,voice=1
  collatio compare a.mxl b.mxl --select-b bars=17-40 --format json > findings.json
  collatio compare a.musicxml b.mid --pdf exhibit.pdf --json findings.json --export passages/ \\
      --case-label 'Holloway v. Wren (invented demo case)' --date 2025-06-01 --paper letter

Exit codes:
  0  success
  1  compared, but some input was read with warnings
  2  usage error (an option outside its range, a selection that matches nothing, or an
     output that would replace an input or something that is not a regular file)
  3  input error (a file could not be read), or an output file could not be written (also
     when another collatio run kept its output folder locked past the wait)

Environment:
  COLLATIO_LOCK_WAIT  seconds to wait for another run writing into the same output folders
                      (default 60)
  SOURCE_DATE_EPOCH   the date printed on the PDF when --date is not given"
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
    /// The first work (A): MusicXML, .mxl, MIDI or an audio recording.
    pub a: PathBuf,
    /// The second work (B), compared against A (any of the same formats).
    pub b: PathBuf,

    /// Melody of A, e.g. part=P1,voice=1 or track=2,channel=1,bars=9-24.
    #[arg(long, value_name = "SPEC", help_heading = "SELECTION")]
    pub select_a: Option<SelectionSpec>,
    /// Melody of B, same form as --select-a.
    #[arg(long, value_name = "SPEC", help_heading = "SELECTION")]
    pub select_b: Option<SelectionSpec>,
    /// Candidate melody lines of each work to pair and check (the most melody-like parts,
    /// staves and voices); the strongest pairing is compared. 1 checks only the most
    /// melody-like line of each. An explicit --select-a/--select-b fixes that work's line.
    #[arg(long, value_name = "N", default_value_t = 3,
          value_parser = clap::value_parser!(u16).range(1..=12), help_heading = "SELECTION")]
    pub melody_candidates: u16,
    /// Read both works in performance order: repeats played out, first and second endings
    /// taken in turn.
    #[arg(long, help_heading = "INPUT")]
    pub performance_order: bool,

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

    #[command(flatten)]
    pub paths: PathArgs,

    #[command(flatten)]
    pub progress: ProgressArgs,
}

impl CompareArgs {
    /// Every analysis setting, validated.
    pub fn settings(&self) -> Result<CompareSettings, UsageError> {
        Ok(CompareSettings {
            align: self.alignment.params(),
            chance: self.statistics.chance_params(),
            harmony: self.harmony.params()?,
            sync: self.harmony.sync_params(),
            melody_candidates: usize::from(self.melody_candidates),
        })
    }

    /// Reading options for A and B.
    pub fn read_options(&self) -> Result<(ReadOptions, ReadOptions), UsageError> {
        let audio = self.audio.options()?;
        let make = |spec: &Option<SelectionSpec>| ReadOptions {
            limits: self.limits.limits(),
            choice: spec.clone().unwrap_or_default().0,
            unfold_repeats: self.performance_order,
            audio: audio.clone(),
        };
        Ok((make(&self.select_a), make(&self.select_b)))
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
