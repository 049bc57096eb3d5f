//! Everything a comparison found, as one plain-data model that every renderer reads: the text
//! report, the JSON record, the PDF exhibit and the passage exports.
//!
//! In: the results of the stages before it (the melodic passages from [`crate::compare`], their
//! chance figures from [`crate::stats`], their commonness from [`crate::corpus`], the harmonic
//! evidence and the score following). Out: [`Findings`], holding also the two timelines as
//! compared (a recording that follows a score carries the score's bars) and every setting
//! used. Nothing here analyses; [`crate::pipeline`] fills it in.

use crate::align::harmony::HarmonyParams;
use crate::align::sync::SyncParams;
use crate::align::AlignParams;
use crate::compare::differences::Difference;
use crate::compare::harmony::HarmonicEvidence;
use crate::compare::pairing::PairingCheck;
use crate::compare::sync::SyncSummary;
use crate::compare::{Passage, Relatedness};
use crate::corpus::{Commonness, CorpusSummary};
use crate::stats::chance::{ChanceParams, ChanceSummary, Significance};
use crate::timeline::Piece;
use serde::Serialize;

/// The evidence that found a passage.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Evidence {
    /// The melodic alignment.
    Melody,
    /// A harmonic passage covering the same stretch of both works.
    Harmony,
}

/// One shared passage with everything later stages found about it.
#[derive(Debug, Clone, Serialize)]
pub struct Finding {
    /// Where it lies, its measures and its alignment path.
    #[serde(flatten)]
    pub passage: Passage,
    /// Chance of such a score between unrelated melodies, when computed.
    pub significance: Option<Significance>,
    /// How common the figure is in a reference corpus, when one is given.
    pub commonness: Option<Commonness>,
    /// The evidence that found the passage: `melody`, and `harmony` when a harmonic passage
    /// covers the same stretch of both works.
    pub evidence: Vec<Evidence>,
    /// The note-level differences within the passage.
    pub differences: Vec<Difference>,
}

impl Finding {
    /// A passage found by the melody alone, with its differences and nothing else known
    /// about it yet.
    pub fn melodic(passage: Passage, differences: Vec<Difference>) -> Finding {
        Finding {
            passage,
            significance: None,
            commonness: None,
            evidence: vec![Evidence::Melody],
            differences,
        }
    }
}

/// Every setting of a comparison: what the report calls the recipe. The default is the
/// command line's: every stage on, with its default parameters.
#[derive(Debug, Clone)]
pub struct CompareSettings {
    /// Melodic alignment.
    pub align: AlignParams,
    /// The chance figures: which null, and its settings.
    pub chance: ChanceParams,
    /// Harmonic comparison; `None` turns it off.
    pub harmony: Option<HarmonyParams>,
    /// Score following of a recording against a score; `None` keeps a recording's own
    /// (estimated) bars.
    pub sync: Option<SyncParams>,
    /// Candidate melody lines of each work paired and scanned (see
    /// [`crate::compare::pairing`]); the strongest pairing is compared. Default 3; 1 compares
    /// only the most melody-like line of each.
    pub melody_candidates: usize,
}

impl Default for CompareSettings {
    fn default() -> Self {
        CompareSettings {
            align: AlignParams::default(),
            chance: ChanceParams::default(),
            harmony: Some(HarmonyParams::default()),
            sync: Some(SyncParams::default()),
            melody_candidates: crate::compare::pairing::DEFAULT_CANDIDATES,
        }
    }
}

/// What a comparison of two works found.
#[derive(Debug, Clone)]
pub struct Findings {
    /// Work A as compared.
    pub a: Piece,
    /// Work B as compared (a recording that follows A carries A's bars).
    pub b: Piece,
    /// Every setting used.
    pub settings: CompareSettings,
    /// How related the two melodies are as wholes (see [`crate::compare`]).
    pub relatedness: Relatedness,
    /// Share of the shorter melody's possible evidence that the passages carry, in [0, 1]
    /// (see [`crate::compare`]).
    pub coverage: f64,
    /// Notes in A's melody.
    pub notes_a: usize,
    /// Notes in B's melody.
    pub notes_b: usize,
    /// Notes of A's melody inside no passage.
    pub unmatched_a: usize,
    /// Notes of B's melody inside no passage.
    pub unmatched_b: usize,
    /// How the passages were searched for: every note pair, or from seeds in long works.
    pub search: crate::align::SearchMethod,
    /// Shared passages, strongest first.
    pub passages: Vec<Finding>,
    /// What the passages' chance figures rest on, when computed.
    pub chance: Option<ChanceSummary>,
    /// The reference corpus consulted, when one was given.
    pub corpus: Option<CorpusSummary>,
    /// Evidence from the two pieces' chroma, when computed.
    pub harmony: Option<HarmonicEvidence>,
    /// How a recording follows a score, when one side is each.
    pub synchronisation: Option<SyncSummary>,
    /// Every pairing of candidate lines checked, the one compared marked `chosen`.
    pub pairings: Vec<PairingCheck>,
    /// Note pairs (A, B) from which a short interval figure recurs in the other melody (see
    /// [`crate::compare::recurrence`]), the dot plot's background.
    pub recurrences: Vec<[usize; 2]>,
}

/// One melody of a corpus that shares passages with a query.
#[derive(Debug, Clone, Serialize)]
pub struct Hit {
    /// The query line that found it: part, staff and voice in words.
    pub query_line: String,
    /// Path of the melody inside the corpus.
    pub path: String,
    /// The corpus line matched: the label of the indexed line (part, staff and voice in
    /// words), or its part id in an index built with one line per file.
    pub corpus_line: String,
    /// Title, when the file had one.
    pub title: Option<String>,
    /// Relatedness to the query (as `compare` defines it); hits are ranked by its value.
    pub relatedness: Relatedness,
    /// Coverage of the shorter melody by shared passages (as `compare` defines it).
    pub coverage: f64,
    /// Shared passages, the query as A.
    pub passages: Vec<Finding>,
}

/// What a search of a corpus found.
#[derive(Debug, Clone)]
pub struct SearchFindings {
    /// The query as read.
    pub query: Piece,
    /// The index file searched: path, SHA-256, build settings and melodies.
    pub corpus: crate::corpus::IndexSource,
    /// Alignment settings used.
    pub align: AlignParams,
    /// What the hits' chance figures rest on, when computed (for the most melody-like line).
    pub chance: Option<ChanceSummary>,
    /// The query lines searched for, most melody-like first.
    pub query_lines: Vec<String>,
    /// Best first.
    pub hits: Vec<Hit>,
}
