//! Options of the outputs: format, and the exhibit, JSON record and exports.

use clap::{Args, ValueEnum};
use std::path::PathBuf;

#[derive(Debug, Clone, Copy, ValueEnum)]
pub enum OutputFormat {
    /// A listing for people.
    Text,
    /// The JSON record (schema: docs/compare-json.md for compare and search, docs/inspect-json.md
    /// for inspect).
    Json,
}

/// Files written besides the listing: the PDF exhibit, the JSON record, passage exports.
#[derive(Debug, Args)]
pub struct ExhibitArgs {
    /// Write the PDF exhibit to FILE; `-` writes it to standard output in place of the listing.
    #[arg(long, value_name = "FILE", help_heading = "OUTPUT")]
    pub pdf: Option<PathBuf>,
    /// Write the JSON record (as --format json prints it) to FILE; `-` prints it on standard
    /// output in place of the listing.
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
    /// Whether the JSON record goes to standard output (`--json -`).
    pub fn json_to_stdout(&self) -> bool {
        self.json.as_deref() == Some(std::path::Path::new("-"))
    }

    /// Whether the PDF goes to standard output (`--pdf -`).
    pub fn pdf_to_stdout(&self) -> bool {
        self.pdf.as_deref() == Some(std::path::Path::new("-"))
    }

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
            pdf: self.pdf.clone().filter(|_| !self.pdf_to_stdout()),
            json: self.json.clone().filter(|_| !self.json_to_stdout()),
            export_dir: self.export.clone(),
        };
        Ok((options, outputs))
    }
}

/// Progress shown on standard error during long work.
#[derive(Debug, Args)]
pub struct ProgressArgs {
    /// Show no progress on standard error. Otherwise any step running over about a second is
    /// shown: a bar or spinner on a terminal, else a plain line every few seconds naming the
    /// step. Progress never changes standard output or the files written.
    #[arg(long, help_heading = "OUTPUT")]
    pub no_progress: bool,
}

/// How input paths are recorded in the listing, the JSON record and the PDF.
#[derive(Debug, Args)]
pub struct PathArgs {
    /// Record input files by name only (the default: an exhibit then does not show the
    /// folders of the machine it was made on, and the same inputs give the same bytes from
    /// any folder; the SHA-256 identifies each file), or by the path as given on the command
    /// line.
    #[arg(long, value_enum, default_value_t = RecordPathsArg::Names, value_name = "HOW",
          help_heading = "OUTPUT")]
    pub record_paths: RecordPathsArg,
}

/// Values of --record-paths.
#[derive(Debug, Clone, Copy, ValueEnum)]
pub enum RecordPathsArg {
    /// The file name only.
    Names,
    /// The path as given on the command line.
    AsGiven,
}

impl PathArgs {
    /// The library's setting.
    pub fn record(&self) -> collatio::timeline::RecordPaths {
        match self.record_paths {
            RecordPathsArg::Names => collatio::timeline::RecordPaths::Names,
            RecordPathsArg::AsGiven => collatio::timeline::RecordPaths::AsGiven,
        }
    }
}
