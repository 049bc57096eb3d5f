//! Options of `corpus build` and `search`.

use super::analysis::AlignmentArgs;
use super::input::{LimitArgs, SelectionSpec};
use super::output::{OutputFormat, PathArgs, ProgressArgs};
use clap::{Args, Subcommand};
use std::path::PathBuf;

/// Working with a corpus index.
#[derive(Debug, Subcommand)]
pub enum CorpusCommand {
    /// Read every MIDI, MusicXML and audio file under a folder and write an index.
    #[command(after_long_help = "Examples:
  collatio corpus build demo/corpus -o target/demo/corpus.idx
  collatio search new-song.musicxml --corpus target/demo/corpus.idx")]
    Build(BuildArgs),
    /// Check every section's checksum and every field of an index (a search checks only the
    /// sections it reads).
    #[command(after_long_help = "Examples:
  collatio corpus verify target/demo/corpus.idx")]
    Verify(VerifyArgs),
}

/// `corpus verify`.
#[derive(Debug, Args)]
pub struct VerifyArgs {
    /// Index file to check.
    pub index: PathBuf,
}

/// `corpus build`.
#[derive(Debug, Args)]
pub struct BuildArgs {
    /// Folder to read (recursively; hidden files and folders are skipped).
    pub dir: PathBuf,
    /// Index file to write (atomically; never over an input).
    #[arg(short, long, value_name = "FILE")]
    pub output: PathBuf,
    /// Candidate melody lines of each file indexed (the most melody-like parts, staves and
    /// voices), each as its own melody naming its line, so that a file whose tune is not its
    /// most melody-like line is still found; 1 indexes only the most melody-like.
    #[arg(long, value_name = "N", default_value_t = 3,
          value_parser = clap::value_parser!(u16).range(1..=12), help_heading = "SELECTION")]
    pub melody_candidates: u16,
    #[command(flatten)]
    pub limits: LimitArgs,
    #[command(flatten)]
    pub progress: ProgressArgs,
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
    /// Candidate melody lines of the query searched for (the most melody-like parts, staves
    /// and voices); each corpus melody keeps its strongest hit. An explicit --select fixes the
    /// line.
    #[arg(long, value_name = "N", default_value_t = 3,
          value_parser = clap::value_parser!(u16).range(1..=12), help_heading = "SELECTION")]
    pub melody_candidates: u16,
    /// Best matches listed.
    #[arg(value_parser = super::ranges::count(1, 10_000), long, default_value_t = 10, help_heading = "SEARCH")]
    pub top: usize,
    /// Candidates retrieved by shared figures and then aligned in full (raise it to look
    /// deeper in corpora full of near-duplicates; each costs one full alignment).
    #[arg(value_parser = super::ranges::count(1, 1_000_000), long, default_value_t = 100, help_heading = "SEARCH")]
    pub candidates: usize,
    /// Corpus melodies the query is aligned with to fit the chance figures of its hits
    /// (the corpus null, Pearson 1998).
    #[arg(
        long,
        default_value_t = 300,
        value_name = "N",
        value_parser = clap::value_parser!(u64).range(50..=100_000),
        help_heading = "SEARCH"
    )]
    pub references: u64,
    /// Leave out the chance figures of the hits.
    #[arg(long, help_heading = "SEARCH")]
    pub no_chance: bool,
    #[command(flatten)]
    pub alignment: AlignmentArgs,
    #[command(flatten)]
    pub limits: LimitArgs,
    /// Output format.
    #[arg(long, value_enum, default_value_t = OutputFormat::Text, help_heading = "OUTPUT")]
    pub format: OutputFormat,
    #[command(flatten)]
    pub paths: PathArgs,
    #[command(flatten)]
    pub progress: ProgressArgs,
}
