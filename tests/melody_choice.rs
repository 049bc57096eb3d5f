//! The melody choice: melody-likeness on the held-out half of the development set, and real
//! tunes found in arrangements where the tune is not the obvious line.
//!
//! Development set: `tests/fixtures/melody_choice/dev_set.json`, written by
//! `scripts/melody_dev_set.py` from music21's bundled public-domain corpus (Bach chorales,
//! songs with piano, the songs for voice and piano with the voice an octave lower, classical
//! string quartets, O'Neill's "Music of Ireland" and Essen folk tunes with a keyboard
//! accompaniment under them, other Essen tunes with a keyboard right hand or a sustained line
//! above them). Arrangements: `tests/fixtures/melody_choice/`, written by
//! `make_melody_choice_fixtures.py` there from tunes of "Ryan's Mammoth Collection" (1883),
//! which are not in the development set.

#![allow(clippy::unwrap_used, clippy::expect_used)]

use collatio::findings::{CompareSettings, Findings};
use collatio::ingest::likeness::{log_odds_of, FEATURE_NAMES, INTERCEPT, WEIGHTS};
use collatio::ingest::{read_file, MelodyChoice, ReadOptions};
use collatio::stats::chance::{ChanceParams, NullChoice};
use std::collections::BTreeMap;
use std::path::PathBuf;

fn fixture(name: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("tests/fixtures/melody_choice")
        .join(name)
}

fn dev_set() -> serde_json::Value {
    let text = std::fs::read_to_string(fixture("dev_set.json")).unwrap();
    serde_json::from_str(&text).unwrap()
}

/// The weights in the program are the ones the development script fitted and recorded.
#[test]
fn weights_are_the_fitted_ones() {
    let set = dev_set();
    let names: Vec<&str> = set["features"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_str().unwrap())
        .collect();
    assert_eq!(names, FEATURE_NAMES);
    assert!((set["intercept"].as_f64().unwrap() - INTERCEPT).abs() < 1e-6);
    for (k, w) in set["weights"].as_array().unwrap().iter().enumerate() {
        assert!(
            (w.as_f64().unwrap() - WEIGHTS[k]).abs() < 1e-6,
            "weight {k}"
        );
    }
}

/// Whether the most melody-like candidate of a file of the development set is the melody.
fn ranked_first(file: &serde_json::Value) -> bool {
    let candidates = file["candidates"].as_array().unwrap();
    let mut best = (f64::MIN, 0usize);
    for (k, c) in candidates.iter().enumerate() {
        let x: Vec<f64> = c["x"]
            .as_array()
            .unwrap()
            .iter()
            .map(|v| v.as_f64().unwrap())
            .collect();
        let z = log_odds_of(&x);
        if z > best.0 {
            best = (z, k);
        }
    }
    candidates[best.1]["label"] == 1
}

/// The held-out files whose melody is not the highest line (the mean pitch of each line of the
/// melody's part below another candidate's): songs for voice and piano from music21's corpus with the voice an octave
/// lower, as a tenor or baritone sings a treble-clef part (Schubert's "Der Lindenbaum",
/// Schumann's "Dichterliebe" no. 2, Handel's "Lascia ch'io pianga"), Essen folk tunes moved to
/// a middle register under a keyboard right hand or a sustained line, and any chorale, quartet
/// or song of the corpus whose tune dips below another part. Height alone would rank none of
/// them right; at least 90% (a target stated before the fit, under the 95% of the whole set
/// because these are the hard cases) must be.
#[test]
fn melody_below_another_line_ranked_first_on_held_out_half() {
    let set = dev_set();
    let below: Vec<&serde_json::Value> = set["files"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|f| f["half"] == "check")
        .filter(|f| {
            f["candidates"]
                .as_array()
                .unwrap()
                .iter()
                .filter(|c| c["label"] == 1)
                .all(|c| c["pitch_mean_relative"].as_f64().unwrap() < 0.0)
        })
        .collect();
    let hits = below.iter().filter(|f| ranked_first(f)).count();
    eprintln!("melody below another line: {hits}/{}", below.len());
    assert!(below.len() >= 30, "held-out files: {}", below.len());
    let accuracy = hits as f64 / below.len() as f64;
    assert!(accuracy >= 0.9, "ranked first: {accuracy:.3}");
}

/// Ranked-first accuracy of the melody part on the half of the development set that did not
/// fit the weights: at least 95% over all files, the target of the task (issue 17), with the
/// melody as the corpus marks it (the Soprano of Bach's chorales, the voice of songs, the first
/// violin of classical quartets, the tune of the folk-tune files).
#[test]
fn melody_ranked_first_on_held_out_half() {
    let set = dev_set();
    let mut per: BTreeMap<String, (usize, usize)> = BTreeMap::new();
    for file in set["files"].as_array().unwrap() {
        if file["half"] != "check" {
            continue;
        }
        let hit = ranked_first(file);
        let entry = per
            .entry(file["collection"].as_str().unwrap().to_string())
            .or_default();
        entry.0 += 1;
        entry.1 += usize::from(hit);
    }
    let (n, k) = per.values().fold((0, 0), |(n, k), (a, b)| (n + a, k + b));
    for (c, (a, b)) in &per {
        eprintln!("{c}: {b}/{a}");
    }
    assert!(n >= 100, "held-out files: {n}");
    let accuracy = k as f64 / n as f64;
    assert!(
        accuracy >= 0.95,
        "ranked first on held-out half: {accuracy:.3}"
    );
}

fn settings() -> CompareSettings {
    CompareSettings {
        chance: ChanceParams {
            null: NullChoice::Off,
            ..Default::default()
        },
        harmony: None,
        sync: None,
        ..Default::default()
    }
}

fn compare(arranged: &str, plain: &str, choice: MelodyChoice) -> Findings {
    let options = ReadOptions {
        choice,
        ..Default::default()
    };
    let a = read_file(&fixture(arranged), &options).unwrap();
    let b = read_file(&fixture(plain), &ReadOptions::default()).unwrap();
    collatio::pipeline::compare_works(a, b, &settings(), None)
}

/// Notes of the plain tune inside the strongest passage, over its notes.
fn share_found(f: &Findings) -> f64 {
    f.passages
        .first()
        .map_or(0.0, |p| p.passage.b.notes as f64 / f.notes_b.max(1) as f64)
}

/// Neutral track names, a sustained line of half notes above the tune, bass and drums: the
/// whole tune is found (tunes of Ryan's Mammoth Collection, 1883).
#[test]
fn neutral_names_and_a_line_above() {
    for k in 1..=3 {
        for ext in ["mid", "musicxml"] {
            let f = compare(
                &format!("tune{k}-neutral.{ext}"),
                &format!("tune{k}-plain.mid"),
                MelodyChoice::default(),
            );
            assert!(
                share_found(&f) > 0.9,
                "tune{k}-neutral.{ext}: {:.2} of the tune found; {}",
                share_found(&f),
                f.a.selection.reason
            );
            assert!(f.pairings.len() > 1);
            assert_eq!(f.pairings.iter().filter(|p| p.chosen).count(), 1);
        }
    }
}

/// The tune as the top of a chordal piano right hand over a left-hand bass: found (Ryan's
/// Mammoth Collection, 1883).
#[test]
fn melody_in_a_chordal_right_hand() {
    for k in 1..=3 {
        let f = compare(
            &format!("tune{k}-piano.mid"),
            &format!("tune{k}-plain.mid"),
            MelodyChoice::default(),
        );
        assert!(
            share_found(&f) > 0.9,
            "tune{k}-piano: {:.2}; {}",
            share_found(&f),
            f.a.selection.reason
        );
    }
}

/// The tune moving between two instruments, half on each: a half is found, and the other
/// instrument's pairing is listed as sharing a passage too (Ryan's Mammoth Collection, 1883).
#[test]
fn melody_moving_between_instruments() {
    for k in 1..=3 {
        let f = compare(
            &format!("tune{k}-moving.mid"),
            &format!("tune{k}-plain.mid"),
            MelodyChoice::default(),
        );
        assert!(
            share_found(&f) > 0.4,
            "tune{k}-moving: {:.2}; {}",
            share_found(&f),
            f.a.selection.reason
        );
        let sharing: Vec<&str> = f
            .pairings
            .iter()
            .filter(|p| p.shares_passage)
            .map(|p| p.a.part.as_str())
            .collect();
        assert!(sharing.len() >= 2, "tune{k}-moving: {sharing:?}");
        // The reports say which other lines share a passage and that theirs are not reported.
        let record = collatio::report::compare::record(&f);
        assert_eq!(record.also_sharing.len(), sharing.len() - 1);
        let text = collatio::report::pairings::render(&f);
        assert!(text.contains("Other lines share a passage too"), "{text}");
        for other in &record.also_sharing {
            assert!(text.contains(other.as_str()), "{other}: {text}");
        }
    }
}

/// An explicit selection wins: naming the line above the tune compares it alone.
#[test]
fn explicit_selection_wins() {
    let choice = MelodyChoice {
        part: Some("Part 1".into()),
        ..Default::default()
    };
    let f = compare("tune1-neutral.mid", "tune1-plain.mid", choice);
    assert_eq!(f.pairings.len(), 1);
    assert!(
        f.a.selection.reason.contains("as asked"),
        "{}",
        f.a.selection.reason
    );
    assert!(share_found(&f) < 0.5);
}

/// `search` looks for each of the query's best lines: the arranged tune (neutral names, a line
/// above it) finds its plain tune first, through the tune's line (Ryan's Mammoth Collection,
/// 1883).
#[test]
fn search_finds_the_tune_through_its_line() {
    use collatio::corpus::{CorpusIndex, IndexSource, MelodyEntry};
    use collatio::pipeline::{search, CorpusRef, SearchSettings};
    let entries: Vec<MelodyEntry> = (1..=3)
        .map(|k| {
            let name = format!("tune{k}-plain.mid");
            let piece = read_file(&fixture(&name), &ReadOptions::default()).unwrap();
            MelodyEntry::from_piece(&piece, name)
        })
        .collect();
    let index = CorpusIndex::build(entries);
    let source = IndexSource::new("plain tunes", &[], &index);
    let query = read_file(&fixture("tune2-neutral.mid"), &ReadOptions::default()).unwrap();
    let settings = SearchSettings {
        chance: ChanceParams {
            null: NullChoice::Off,
            ..Default::default()
        },
        ..Default::default()
    };
    let found = search(
        query,
        CorpusRef {
            index: &index,
            source: &source,
        },
        &settings,
    );
    assert!(found.query_lines.len() > 1);
    let first = &found.hits[0];
    assert_eq!(first.path, "tune2-plain.mid");
    assert!(first.query_line.contains("Part 2"), "{}", first.query_line);
    assert!(first.relatedness.value > 0.9);
}
