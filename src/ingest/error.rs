//! Errors met while reading an input file.

use std::path::PathBuf;

/// An input that could not be read, with the file it came from.
#[derive(Debug, thiserror::Error)]
#[error("{}: {problem}", path.display())]
pub struct IngestError {
    /// The file.
    pub path: PathBuf,
    /// What went wrong.
    pub problem: Problem,
}

/// What went wrong while reading an input, prefixed by the layer that found it.
#[derive(Debug, thiserror::Error)]
pub enum Problem {
    /// The file system refused.
    #[error("cannot read the file: {0}")]
    Io(#[from] std::io::Error),
    /// A folder, device, pipe or socket where a file was expected (reading one could block
    /// forever or never end).
    #[error("not a regular file ({0}); give the path of a file")]
    NotAFile(&'static str),
    /// Zero bytes.
    #[error("the file is empty")]
    Empty,
    /// A size, count or duration above a configured limit.
    #[error("{what} is {value}, above the limit of {limit} (raise it with {flag})")]
    Limit {
        /// What was measured.
        what: &'static str,
        /// The measured value.
        value: u64,
        /// The limit in force.
        limit: u64,
        /// The command-line flag that raises it.
        flag: &'static str,
    },
    /// The content is no format collatio reads.
    #[error("not a MIDI or MusicXML file: {0}")]
    UnknownFormat(String),
    /// A Standard MIDI File that is malformed.
    #[error("midi: {0}")]
    Midi(String),
    /// XML that is not well-formed.
    #[error("musicxml: not well-formed XML: {0}")]
    Xml(String),
    /// Well-formed XML that is not usable MusicXML.
    #[error("musicxml: {0}")]
    MusicXml(String),
    /// XML whose elements nest deeper than the reader allows (checked before parsing).
    #[error("{layer}: nesting too deep: elements nested more than {limit} levels")]
    TooDeep {
        /// The layer and document (`musicxml`, `mxl: META-INF/container.xml`).
        layer: &'static str,
        /// The most levels allowed.
        limit: usize,
    },
    /// XML beyond another of the limits checked before parsing (attributes per element,
    /// entity expansion).
    #[error("{layer}: {what}")]
    XmlLimit {
        /// The layer and document (`musicxml`, `mxl: META-INF/container.xml`).
        layer: &'static str,
        /// What is beyond the limit.
        what: String,
    },
    /// A compressed MusicXML container that cannot be opened.
    #[error("mxl: {0}")]
    Mxl(String),
    /// The file has no pitched notes to compare.
    #[error("no notes: {0}")]
    NoNotes(String),
    /// The selection options match nothing in this file.
    #[error("selection: {0}")]
    Selection(String),
    /// An audio recording that cannot be decoded or analysed (messages start with `audio:`).
    #[error(transparent)]
    Audio(#[from] crate::audio::AudioError),
}

impl Problem {
    /// Attaches the file path.
    pub fn at(self, path: impl Into<PathBuf>) -> IngestError {
        IngestError {
            path: path.into(),
            problem: self,
        }
    }
}
