//! The chance figures of a comparison: which null model gives a passage's E-value and
//! p-value, and what it found.
//!
//! Three nulls, each a published method:
//!
//! - **corpus** (Pearson 1998): A's best local scores against melodies of a reference corpus
//!   that the user chose as the relevant repertoire, corrected for length and fitted with an
//!   extreme-value distribution ([`super::reference`]). Calibrated when the corpus is of the
//!   same repertoire as B: on pairs of unrelated tunes of one collection with a corpus of
//!   another collection of the same idiom, the shares of p below 0.05 and 0.01 fall within
//!   the binomial 99% interval (`tests/calibration.rs`, `docs/statistics.md`).
//! - **general**: the same model fitted once, on unrelated pairs of German folk songs, Irish
//!   and American dance tunes and Bach chorale melodies, and shipped with the tool
//!   ([`GENERAL`]); valid for the default alignment parameters only. It describes no single
//!   repertoire: between melodies of an idiom that shares much stock material it makes
//!   passages look rarer than they are (measured in `docs/statistics.md`).
//! - **shuffles** (Altschul & Erickson 1985, k-let form): each melody's pitches shuffled
//!   keeping runs of k ([`super::null`]); no E-value rests on fewer than
//!   [`MIN_DISTINCT_DRAWS`] distinct shuffled orders of either melody.
//!
//! [`NullChoice::Auto`] takes the corpus null when a corpus is given, else the general null
//! when the alignment parameters are the defaults it was fitted for, else the shuffles.

use super::gumbel::Gumbel;
use super::null::{NullModel, NullParams, NullSummary, MIN_DISTINCT_DRAWS};
use super::reference::LengthCorrectedNull;
pub use super::significance::{NullKind, Significance};
use crate::align::{best_score, AlignParams};
use crate::features::Sequence;
use rayon::prelude::*;
use serde::Serialize;

/// Which null to use.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Default)]
#[serde(rename_all = "lowercase")]
pub enum NullChoice {
    /// Corpus when a corpus is given, else general for the default alignment parameters,
    /// else shuffles. Default.
    #[default]
    Auto,
    /// The shipped general null (the shuffles when the parameters are not its own).
    General,
    /// The shuffles.
    Shuffles,
    /// No chance figures.
    Off,
}

/// The general null for the default alignment parameters: best local scores of 6,000 unrelated
/// pairs of real melodies (1,000 pairs from each of: German folk songs of the Essen
/// collection; Ryan's Mammoth Collection, 1883; O'Neill's Music of Ireland, 1903; Bach chorale
/// melodies; Ryan's against Essen; O'Neill's against Bach; as written by
/// `scripts/make_relatedness_sets.py` from music21 10.5.1's public-domain collections),
/// fitted by `cargo run --release --example fit_null` (`docs/statistics.md`).
///
/// On held-out repertoire it is conservative (airs of Aird's collection: 2.8% of 6,000 unrelated
/// pairs below p = 0.05), and between Irish and American dance tunes, which share much stock
/// material, it overstates significance (6.3% below p = 0.05): see `docs/statistics.md`.
pub const GENERAL: LengthCorrectedNull = LengthCorrectedNull {
    intercept: -30.36096592121082,
    slope: 12.182847196673402,
    gumbel: Gumbel {
        lambda: 0.05060535840712228,
        mu: -11.406216319185262,
    },
    pairs: 6000,
};

/// Fewest corpus melodies the corpus null is fitted on; with a smaller corpus the next null
/// is used, and the report says so.
pub const MIN_REFERENCES: usize = 50;

/// Settings of the chance figures.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct ChanceParams {
    /// Which null. Default automatic.
    pub null: NullChoice,
    /// Corpus melodies the corpus null is fitted on (drawn with the shuffles' seed). Default
    /// 300.
    pub references: usize,
    /// The shuffle null's settings.
    pub shuffles: NullParams,
}

impl Default for ChanceParams {
    fn default() -> Self {
        ChanceParams {
            null: NullChoice::Auto,
            references: 300,
            shuffles: NullParams::default(),
        }
    }
}

/// What the chance figures rest on, as the report states it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ChanceSummary {
    /// The null used.
    pub null: NullKind,
    /// The method in one sentence.
    pub method: String,
    /// The length-corrected fit (corpus and general nulls).
    pub fit: Option<LengthCorrectedNull>,
    /// Corpus melodies the corpus null was fitted on (0 for the other nulls).
    pub references: usize,
    /// The shuffle null's summary, when the shuffles ran.
    pub shuffles: Option<NullSummary>,
    /// Why no chance figure is given, when none is.
    pub withheld: Option<String>,
    /// Why this null and not the one asked for, when they differ.
    pub note: Option<String>,
}

/// The null of one comparison.
#[derive(Debug, Clone)]
pub struct ChanceModel {
    /// What it rests on.
    pub summary: ChanceSummary,
    /// A's melody length and B's, notes.
    lengths: (usize, usize),
    /// The corpus draws' scores (for the empirical p of the corpus null).
    draws: Vec<i32>,
    shuffle_model: Option<NullModel>,
}

/// Whether the parameters score notes as the general null's fit did (the reporting
/// thresholds do not change a best score).
pub fn general_applies(params: &AlignParams) -> bool {
    let d = AlignParams::default();
    AlignParams {
        min_score: d.min_score,
        min_notes: d.min_notes,
        max_passages: d.max_passages,
        full_search: d.full_search,
        ..params.clone()
    } == d
}

impl ChanceModel {
    /// The E-value, p-value and empirical p of a passage score, `None` when withheld.
    pub fn significance(&self, score: i32) -> Option<Significance> {
        self.significance_at(score, self.lengths.0, self.lengths.1)
    }

    /// The same for a pair of melodies of `m` and `n` notes (the corpus null of one query
    /// serves every melody it is compared with; the shuffle null knows only its own pair).
    pub fn significance_at(&self, score: i32, m: usize, n: usize) -> Option<Significance> {
        if self.summary.withheld.is_some() {
            return None;
        }
        match (&self.summary.fit, &self.shuffle_model) {
            (Some(fit), _) => {
                let e_value = fit.e_value(f64::from(score), m, n);
                let empirical_p = (self.summary.null == NullKind::Corpus).then(|| {
                    let at_least = self.draws.iter().filter(|&&s| s >= score).count();
                    (at_least + 1) as f64 / (self.draws.len() + 1) as f64
                });
                Some(Significance {
                    e_value,
                    p_value: -(-e_value).exp_m1(),
                    empirical_p,
                    null: self.summary.null,
                })
            }
            (None, Some(model)) if (m, n) == self.lengths => Some(model.significance(score)),
            _ => None,
        }
    }
}

/// The chance model of melodies `a` and `b`: the null `params` choose, with `references` (a
/// sample of corpus melodies) when a corpus is given. `None` when turned off or a melody is
/// empty.
pub fn chance_model(
    a: &Sequence,
    b: &Sequence,
    align: &AlignParams,
    params: &ChanceParams,
    references: Option<&[Sequence]>,
) -> Option<ChanceModel> {
    if params.null == NullChoice::Off || a.is_empty() || b.is_empty() {
        return None;
    }
    let lengths = (a.len(), b.len());
    let refs = references.filter(|r| !r.is_empty());
    let mut note = None;
    if let (NullChoice::Auto, Some(refs)) = (params.null, refs) {
        if refs.len() < MIN_REFERENCES {
            note = Some(format!(
                "the corpus holds {} melodies, and the corpus null needs at least \
                 {MIN_REFERENCES}",
                refs.len()
            ));
        }
    }
    if let (NullChoice::Auto, Some(refs), None) = (params.null, refs, &note) {
        let draws: Vec<i32> = refs.par_iter().map(|r| best_score(a, r, align)).collect();
        let samples: Vec<(f64, usize, usize)> = draws
            .iter()
            .zip(refs)
            .map(|(&s, r)| (f64::from(s), a.len(), r.len()))
            .collect();
        let fit = LengthCorrectedNull::fit(&samples);
        let withheld = fit
            .is_none()
            .then(|| "A's scores against the corpus melodies have no spread".to_string());
        return Some(ChanceModel {
            summary: ChanceSummary {
                null: NullKind::Corpus,
                method: format!(
                    "A's best local scores against {} melodies of the reference corpus, \
                     regressed on ln(m·n) and fitted with an extreme-value distribution \
                     (Pearson 1998)",
                    refs.len()
                ),
                fit,
                references: refs.len(),
                shuffles: None,
                withheld,
                note: None,
            },
            lengths,
            draws,
            shuffle_model: None,
        });
    }
    if params.null != NullChoice::Shuffles && general_applies(align) {
        return Some(ChanceModel {
            summary: ChanceSummary {
                null: NullKind::General,
                method: "the best local scores of 6,000 unrelated pairs of real melodies (folk \
                         songs, dance tunes, chorale melodies), regressed on ln(m·n) and \
                         fitted with an extreme-value distribution (Pearson 1998), shipped with \
                         collatio for the default alignment parameters"
                    .into(),
                fit: Some(GENERAL),
                references: 0,
                shuffles: None,
                withheld: None,
                note,
            },
            lengths,
            draws: Vec::new(),
            shuffle_model: None,
        });
    }
    if params.shuffles.shuffles == 0 {
        return None;
    }
    if params.null == NullChoice::General || (params.null == NullChoice::Auto && note.is_none()) {
        note = Some("the general null holds for the default scoring only".into());
    }
    let model = NullModel::fit(a, b, align, &params.shuffles);
    let withheld = if model.summary.too_few_draws() {
        Some(format!(
            "the shuffles gave only {} distinct orders of A and {} of B; no E-value rests on \
             fewer than {MIN_DISTINCT_DRAWS}",
            model.summary.distinct_a, model.summary.distinct_b
        ))
    } else if model.summary.window.is_some() && model.summary.gumbel.is_none() {
        Some("the sampled shuffles' scores have no spread to fit".to_string())
    } else {
        None
    };
    Some(ChanceModel {
        summary: ChanceSummary {
            null: NullKind::Shuffles,
            method: model.summary.method.clone(),
            fit: None,
            references: 0,
            shuffles: Some(model.summary.clone()),
            withheld,
            note,
        },
        lengths,
        draws: Vec::new(),
        shuffle_model: Some(model),
    })
}
