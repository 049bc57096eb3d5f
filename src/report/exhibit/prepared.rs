//! An exhibit prepared once for every renderer: the findings, the labels of the two works,
//! the common key and the notation of every passage, and the document digest that marks every
//! file of the run (the PDF, the JSON record, each passage export).

use super::options::{default_label, ExhibitError, ExhibitOptions};
use crate::findings::Findings;
use crate::report::notation::{self, PassageView};
use crate::timeline::Piece;

/// Everything the renderers need, computed once.
#[derive(Debug, Clone)]
pub struct Exhibit<'a> {
    /// Everything the comparison found.
    pub findings: &'a Findings,
    /// Work A as compared.
    pub a: &'a Piece,
    /// Work B as compared.
    pub b: &'a Piece,
    /// Options.
    pub options: &'a ExhibitOptions,
    /// Label of A.
    pub label_a: String,
    /// Label of B.
    pub label_b: String,
    /// Tonic pitch class of the common key.
    pub target_tonic: i32,
    /// The notation of each passage, in rank order.
    pub views: Vec<PassageView>,
    /// The document digest, computed once ([`Exhibit::digest`]).
    digest: String,
}

impl<'a> Exhibit<'a> {
    /// Prepares an exhibit.
    pub fn new(
        findings: &'a Findings,
        options: &'a ExhibitOptions,
    ) -> Result<Exhibit<'a>, ExhibitError> {
        let (a, b) = (&findings.a, &findings.b);
        let target_tonic = crate::theory::parse_tonic(&options.common_key)
            .ok_or_else(|| ExhibitError::BadKey(options.common_key.clone()))?;
        let label_a = options.label_a.clone().unwrap_or_else(|| default_label(a));
        let label_b = options.label_b.clone().unwrap_or_else(|| default_label(b));
        let views = findings
            .passages
            .iter()
            .map(|f| {
                let mut v =
                    notation::passage_view(a, b, &f.passage, (&label_a, &label_b), target_tonic);
                if options.piano_roll {
                    v.a.unstable_pitch = true;
                }
                v
            })
            .collect();
        let mut exhibit = Exhibit {
            findings,
            a,
            b,
            options,
            label_a,
            label_b,
            target_tonic,
            views,
            digest: String::new(),
        };
        exhibit.digest = exhibit.compute_digest();
        Ok(exhibit)
    }

    /// The document digest: a SHA-256 (lower-case hex) of everything the outputs depend on,
    /// the findings included, so that files of two runs that differ in inputs, settings,
    /// options or findings carry different digests. Every file of the run carries it.
    pub fn digest(&self) -> &str {
        &self.digest
    }

    /// The JSON record of the findings, marked with the document digest.
    pub fn record(&self) -> crate::report::compare::CompareRecord {
        let mut record = crate::report::compare::record(self.findings);
        record.document_digest = Some(self.digest.clone());
        record
    }

    /// Hashes the inputs' SHA-256 and recorded paths, every setting, the options of the
    /// document, the tool version and the JSON record of the findings (unmarked).
    fn compute_digest(&self) -> String {
        use sha2::{Digest, Sha256};
        let mut h = Sha256::new();
        h.update(self.a.provenance.sha256.as_bytes());
        h.update(self.b.provenance.sha256.as_bytes());
        // The paths as recorded in the document (file names only, or as given): the same
        // identifier then always means the same bytes.
        for piece in [self.a, self.b] {
            h.update(piece.provenance.path.as_bytes());
            h.update([0u8]);
        }
        h.update(
            serde_json::to_string(&self.findings.settings.align)
                .unwrap_or_default()
                .as_bytes(),
        );
        let o = self.options;
        for part in [
            o.paper.name(),
            o.case_label.as_deref().unwrap_or(""),
            &self.label_a,
            &self.label_b,
            o.date.as_deref().unwrap_or(""),
            &o.common_key,
            if o.piano_roll { "piano roll" } else { "" },
            env!("CARGO_PKG_VERSION"),
        ] {
            h.update(part.as_bytes());
            h.update([0u8]);
        }
        h.update(self.a.selection.reason.as_bytes());
        h.update(self.b.selection.reason.as_bytes());
        // How recordings were read, and the corpus consulted, shape the findings too.
        for piece in [self.a, self.b] {
            h.update(
                serde_json::to_string(&piece.transcription)
                    .unwrap_or_default()
                    .as_bytes(),
            );
            h.update([0u8]);
        }
        h.update(
            serde_json::to_string(&self.findings.corpus)
                .unwrap_or_default()
                .as_bytes(),
        );
        h.update([0u8]);
        // The statistics, harmony and score-following settings shape the document as well.
        let r = self.findings;
        for settings in [
            serde_json::to_string(&r.chance),
            serde_json::to_string(&r.harmony.as_ref().map(|x| &x.parameters)),
            serde_json::to_string(&r.synchronisation.as_ref().map(|x| &x.parameters)),
        ] {
            h.update(settings.unwrap_or_default().as_bytes());
            h.update([0u8]);
        }
        // The findings themselves, as the JSON record states them (without the digest): any
        // setting or reading option not named above that changes a result changes them.
        h.update(
            serde_json::to_vec(&crate::report::compare::record(self.findings)).unwrap_or_default(),
        );
        h.finalize().iter().map(|b| format!("{b:02x}")).collect()
    }
}
