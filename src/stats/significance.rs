//! A passage's chance figures and the null that gave them: the value every null returns.

use serde::Serialize;

/// Which null gave a chance figure.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum NullKind {
    /// A's scores against the reference corpus.
    Corpus,
    /// The null fitted once on real melodies and shipped with the tool.
    General,
    /// Shuffles of the two melodies.
    Shuffles,
}

/// How unlikely a passage's score is between unrelated melodies (see `docs/statistics.md`).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Significance {
    /// Expected number of unrelated pairs of melodies of these lengths whose best passage
    /// scores at least this high.
    pub e_value: f64,
    /// Probability that the best passage of one unrelated pair scores at least this high:
    /// 1 − exp(−E).
    pub p_value: f64,
    /// Share of the null's own draws (shuffled pairs, or corpus melodies) scoring at least this
    /// high, with the usual +1 correction: (count + 1) / (draws + 1). `None` for the general
    /// null, which keeps no draws.
    pub empirical_p: Option<f64>,
    /// The null that gave these figures.
    pub null: NullKind,
}

impl Significance {
    /// The figures of the strongest of `tests` comparisons (Bonferroni): E and the empirical p
    /// multiplied by `tests` (the latter capped at 1), p recomputed as 1 − exp(−E). Unchanged
    /// for one test.
    pub fn for_tests(self, tests: f64) -> Significance {
        if tests <= 1.0 || !tests.is_finite() {
            return self;
        }
        let e_value = self.e_value * tests;
        Significance {
            e_value,
            p_value: -(-e_value).exp_m1(),
            empirical_p: self.empirical_p.map(|p| (p * tests).min(1.0)),
            null: self.null,
        }
    }
}
