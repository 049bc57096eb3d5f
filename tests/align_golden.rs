//! The melodic aligner against a general-purpose alignment library: local alignment scores
//! computed by parasail (Daily 2016, *BMC Bioinformatics* 17:81; its plain Smith–Waterman with
//! affine gaps, `parasail.sw`, version recorded in the golden file) for pitch-only and
//! interval-only cases, written by `scripts/make_alignment_golden.py` into
//! `tests/golden/alignment/parasail_local.json`.
//!
//! collatio's pair score (`src/align/score.rs`) is a sum of a pitch, an interval, a rhythm and a
//! metric term, plus fragmentation and consolidation moves. With the rhythm and metric terms at
//! 0, fragmentation off (`max_fragments` 1) and either the interval terms or the pitch terms at
//! 0, each note reduces to one symbol (its pitch class, or the interval into it) and the pair
//! score to a substitution matrix, so the kernel's scan (`best_score`) and the first passage of
//! `align` are exactly a Smith–Waterman/Gotoh local alignment that the library can compute: no
//! naive path is needed. The gap convention (a gap of k notes costs `gap_open + (k − 1) ·
//! gap_extend`) is parasail's own; the script checks it on a hand-made case.
//!
//! Checked: the best score over the 12 transpositions (pitch-only) or the score (interval-only)
//! equals parasail's; in pitch-only mode the first passage's transposition is the one with the
//! highest score (the lowest of equal ones, as the script records it); and where parasail's
//! score table holds the best score in one cell only, the last aligned pair of the first passage
//! is that cell.
#![allow(clippy::unwrap_used, clippy::expect_used)]

use collatio::align::{align, best_score, AlignParams};
use collatio::features::{MetricLevel, SeqNote, Sequence};
use serde_json::Value;

fn golden() -> Value {
    let path = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/golden/alignment/parasail_local.json"
    );
    serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
}

/// A sequence of MIDI pitches in even notes (rhythm and metre play no part here).
fn sequence(pitches: &[i32]) -> Sequence {
    let notes = pitches
        .iter()
        .enumerate()
        .map(|(i, &pitch)| SeqNote {
            pitch,
            pitch_class: pitch.rem_euclid(12) as u8,
            interval: i.checked_sub(1).map(|p| pitch - pitches[p]),
            ioi: 1.0,
            log_ioi_ratio: (i > 0).then_some(0.0),
            metric: MetricLevel::Weak,
        })
        .collect();
    Sequence { notes }
}

fn int(v: &Value) -> i32 {
    v.as_i64().unwrap() as i32
}

/// The plain configuration of `AlignParams` equivalent to one of the golden file's configs.
fn params(config: &Value) -> AlignParams {
    let zero = |key: &str| config.get(key).map_or(0, int);
    AlignParams {
        pitch_match: zero("pitch_match"),
        pitch_near: zero("pitch_near"),
        pitch_mismatch: zero("pitch_mismatch"),
        interval_match: zero("interval_match"),
        interval_near: zero("interval_near"),
        interval_mismatch: zero("interval_mismatch"),
        rhythm_match: 0,
        rhythm_near: 0,
        rhythm_mismatch: 0,
        metric_match: 0,
        gap_open: int(&config["gap_open"]),
        gap_extend: int(&config["gap_extend"]),
        fragment_penalty: 0,
        max_fragments: 1,
        // Report the best alignment whatever its score or length.
        min_score: 1,
        min_notes: 1,
        max_passages: 1,
        // Exact, as parasail is, whatever the lengths.
        full_search: true,
    }
}

fn pitches(v: &Value) -> Vec<i32> {
    v.as_array().unwrap().iter().map(int).collect()
}

#[test]
fn scores_equal_parasail_on_pitch_only_and_interval_only_cases() {
    let doc = golden();
    assert_eq!(doc["library"], "parasail");
    let cases: Vec<(String, Sequence, Sequence)> = doc["cases"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| {
            (
                c["name"].as_str().unwrap().to_string(),
                sequence(&pitches(&c["a"])),
                sequence(&pitches(&c["b"])),
            )
        })
        .collect();
    let results = doc["results"].as_array().unwrap();
    assert_eq!(results.len(), 4 * cases.len(), "every config on every case");
    let (mut checked, mut ends, mut modes) = (0, 0, std::collections::BTreeSet::new());
    for result in results {
        let config = &doc["configs"][result["config"].as_str().unwrap()];
        let mode = config["mode"].as_str().unwrap();
        modes.insert(mode);
        let params = params(config);
        let name = result["case"].as_str().unwrap();
        let (_, a, b) = cases.iter().find(|c| c.0 == name).unwrap();
        let context = format!("{} / {name}", result["config"]);
        let want = int(&result["best_score"]);

        assert_eq!(best_score(a, b, &params), want, "best_score, {context}");
        let passages = align(a, b, &params);
        if want == 0 {
            assert!(passages.is_empty(), "{context}");
            checked += 1;
            continue;
        }
        let first = passages.first().unwrap_or_else(|| panic!("{context}"));
        assert_eq!(first.score, want, "first passage, {context}");
        if mode == "pitch" {
            assert_eq!(
                i64::from(first.transposition),
                result["best_transposition"].as_i64().unwrap(),
                "{context}"
            );
        }
        if let Some(end) = result["end"].as_array() {
            let end = (end[0].as_u64().unwrap(), end[1].as_u64().unwrap());
            assert_eq!(
                (first.a_range.1 as u64, first.b_range.1 as u64),
                end,
                "last aligned pair, {context}"
            );
            ends += 1;
        }
        checked += 1;
    }
    assert_eq!(modes.len(), 2, "pitch-only and interval-only");
    assert_eq!(checked, results.len());
    // The script found a unique best cell for 38 of the 64 results.
    assert_eq!(ends, 38);
}

/// The golden cases, as a check that they exercise gaps: the edited copies score below a
/// gap-free alignment of the same notes would, and the two gap settings give different scores.
#[test]
fn the_golden_cases_need_gaps() {
    let doc = golden();
    let results = doc["results"].as_array().unwrap();
    let score = |config: &str, case: &str| {
        results
            .iter()
            .find(|r| r["config"] == config && r["case"] == case)
            .map(|r| int(&r["best_score"]))
            .unwrap()
    };
    let edited: Vec<&str> = doc["cases"]
        .as_array()
        .unwrap()
        .iter()
        .filter_map(|c| c["name"].as_str())
        .filter(|n| n.ends_with("/ edited copy"))
        .collect();
    assert_eq!(edited.len(), 6);
    for case in edited {
        // Cheaper gaps can only raise a score; with an insertion or deletion they do.
        assert!(
            score("pitch_cheap_gaps", case) > score("pitch_default", case),
            "{case}"
        );
    }
}
