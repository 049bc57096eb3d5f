//! What an exhibit looks like and says ([`ExhibitOptions`]), which files to write
//! ([`Outputs`]), and why it could not be written ([`ExhibitError`]).

use super::super::output::OutputError;
use crate::report::pdf::layout::Paper;
use crate::timeline::Piece;
use std::path::{Path, PathBuf};

/// What the exhibit looks like and says.
#[derive(Debug, Clone)]
pub struct ExhibitOptions {
    /// Paper size. Default A4.
    pub paper: Paper,
    /// Case label printed on every page (e.g. `Holloway v. Wren (invented demo case)`).
    /// Default none.
    pub case_label: Option<String>,
    /// Label of work A. Default: its title, else its file name.
    pub label_a: Option<String>,
    /// Label of work B. Default: its title, else its file name.
    pub label_b: Option<String>,
    /// The date printed, `YYYY-MM-DD`; see [`resolve_date`]. Default none.
    pub date: Option<String>,
    /// Tonic of the common key the passages are shown in, as a name (`C`, `Eb`, `F#`).
    /// Default `C`.
    pub common_key: String,
    /// Draw piano rolls instead of staves for every passage. Default false (rolls only where
    /// pitch is unstable).
    pub piano_roll: bool,
}

impl Default for ExhibitOptions {
    fn default() -> Self {
        ExhibitOptions {
            paper: Paper::A4,
            case_label: None,
            label_a: None,
            label_b: None,
            date: None,
            common_key: "C".into(),
            piano_roll: false,
        }
    }
}

/// Which files to write.
#[derive(Debug, Clone, Default)]
pub struct Outputs {
    /// The PDF exhibit.
    pub pdf: Option<PathBuf>,
    /// The JSON record (the same as `compare --format json`).
    pub json: Option<PathBuf>,
    /// A folder for the passage exports (MusicXML and MIDI per passage); created if missing.
    pub export_dir: Option<PathBuf>,
}

impl Outputs {
    /// Whether any file is to be written.
    pub fn any(&self) -> bool {
        self.pdf.is_some() || self.json.is_some() || self.export_dir.is_some()
    }
}

/// Why the exhibit could not be written.
#[derive(Debug, thiserror::Error)]
pub enum ExhibitError {
    /// An output could not be written, or names an input.
    #[error(transparent)]
    Output(#[from] OutputError),
    /// A date that is not `YYYY-MM-DD`, or a `SOURCE_DATE_EPOCH` that is not a number of
    /// seconds.
    #[error("output: {0}")]
    BadDate(String),
    /// A common key that is not a note name.
    #[error("output: --common-key '{0}' is not a key; use a note name such as C, G, Eb or F#")]
    BadKey(String),
    /// A template failed to render (a bug in a template).
    #[error("template {name}: {message}")]
    Template {
        /// Template name.
        name: String,
        /// The engine's message.
        message: String,
    },
    /// The PDF could not be serialised.
    #[error("pdf: {0}")]
    Pdf(String),
    /// A MIDI export could not be serialised.
    #[error("midi export: {0}")]
    Midi(String),
    /// The JSON record could not be serialised.
    #[error("json: {0}")]
    Json(#[from] serde_json::Error),
}

impl ExhibitError {
    /// Whether the error is the user's choice of options (exit code 2) rather than a failure.
    pub fn is_usage(&self) -> bool {
        match self {
            ExhibitError::Output(e) => e.is_usage(),
            ExhibitError::BadDate(_) | ExhibitError::BadKey(_) => true,
            _ => false,
        }
    }
}

/// Default label of a work: its title, else its file name.
pub fn default_label(piece: &Piece) -> String {
    piece.title.clone().unwrap_or_else(|| {
        Path::new(&piece.provenance.path).file_name().map_or_else(
            || piece.provenance.path.clone(),
            |n| n.to_string_lossy().into_owned(),
        )
    })
}
