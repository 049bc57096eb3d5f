//! Long works: above `FULL_SEARCH_MAX_CELLS` note pairs, passages are searched for from seeds
//! (runs of agreeing intervals) and aligned in diagonal bands, after the seed-and-extend
//! scheme of BLAST (Altschul et al. 1990; 1997) and banded alignment (Chao, Pearson & Miller
//! 1992). The reference is the full local alignment (itself checked against parasail in
//! `align_golden.rs`): on real melodies the seeded search must find the passages the full
//! search finds.
//!
//! The works are built from the real melodies of `tests/fixtures/relatedness/subset.json`
//! (music21 10.5.1's public-domain collections: Ryan's Mammoth Collection, 1883; O'Neill's
//! "Music of Ireland", 1903; Aird's Airs; Bach chorale melodies; Essen folk songs): about 30
//! unrelated tunes on each side, with two printings of one tune (a real variant pair, written
//! down independently) placed in the middle of each.
#![allow(clippy::unwrap_used, clippy::expect_used)]

mod common;

use collatio::align::seeded::{align_seeded, SearchMethod};
use collatio::align::{align_full, is_seeded, AlignParams};
use collatio::features::Sequence;
use collatio::findings::CompareSettings;
use collatio::pipeline::compare_works;
use collatio::report::compare::{record, render_text};
use collatio::stats::chance::GENERAL;
use collatio::timeline::Piece;
use rayon::prelude::*;
use std::collections::BTreeMap;

use common::SubsetTune as Tune;

fn tunes() -> (Vec<Tune>, u32) {
    common::subset()
}

/// Notes (not rests) of an event list.
fn notes(events: &[common::Event]) -> usize {
    events.iter().filter(|e| e.0.is_some()).count()
}

/// A long work: unrelated tunes from `background` until about `target` notes, with `inner`
/// in the middle; every tune padded to whole 4/4 bars with a rest.
fn long_work(
    background: &[&Tune],
    inner: &Tune,
    target: usize,
    divisions: u32,
) -> Vec<common::Event> {
    let bar = divisions * 4;
    let mut events: Vec<common::Event> = Vec::new();
    let mut count = 0;
    let mut placed = false;
    let add = |tune: &Tune, events: &mut Vec<common::Event>| {
        events.extend_from_slice(&tune.events);
        let length: u32 = events.iter().map(|e| e.1).sum();
        let pad = (bar - length % bar) % bar + bar;
        events.push((None, pad));
    };
    for tune in background {
        if !placed && count >= target / 2 {
            add(inner, &mut events);
            count += notes(&inner.events);
            placed = true;
        }
        add(tune, &mut events);
        count += notes(&tune.events);
        if count >= target && placed {
            break;
        }
    }
    events
}

/// Pairs of printings of one tune (first two members of each dance family).
fn variant_pairs(tunes: &[Tune]) -> Vec<(&Tune, &Tune)> {
    let mut families: BTreeMap<&str, Vec<&Tune>> = BTreeMap::new();
    for tune in tunes.iter().filter(|t| t.set == "dance") {
        if let Some(f) = &tune.family {
            families.entry(f.as_str()).or_default().push(tune);
        }
    }
    families
        .values()
        .filter(|members| members.len() >= 2)
        .map(|members| (members[0], members[1]))
        .collect()
}

/// The two long works of the `k`-th variant pair, as pieces.
fn long_pair(k: usize, target: usize) -> (Piece, Piece) {
    let (tunes, divisions) = tunes();
    let background: Vec<&Tune> = tunes.iter().filter(|t| t.set == "background").collect();
    let pairs = variant_pairs(&tunes);
    let (x, y) = pairs[(k * 7) % pairs.len()];
    // Different unrelated tunes on each side, taken from different places of the list.
    let half = background.len() / 2;
    let offset = (k * 37) % half;
    fn rotated<'t>(tunes: &[&'t Tune], offset: usize) -> Vec<&'t Tune> {
        tunes
            .iter()
            .cycle()
            .skip(offset)
            .take(tunes.len())
            .copied()
            .collect()
    }
    let (side_a, side_b) = (
        rotated(&background[..half], offset),
        rotated(&background[half..], offset),
    );
    let a = long_work(&side_a, x, target, divisions);
    let b = long_work(&side_b, y, target, divisions);
    (
        common::melody_piece(&a, divisions, 4, 4),
        common::melody_piece(&b, divisions, 4, 4),
    )
}

// On real works long enough to be searched from seeds, the seeded search finds the strongest
// passage of the full search (the pair of printings of one tune) with the same score and
// the same notes, and every significant passage of the full search; its best score never
// exceeds the full search's (it searches a subset of the cells). Chance-level passages
// (E > 0.05) may be missed: a seed needs a run of agreeing intervals.
#[test]
fn seeded_search_finds_the_passages_of_the_full_search() {
    let params = AlignParams::default();
    let outcomes: Vec<String> = (0..4)
        .into_par_iter()
        .map(|k| {
            let (a, b) = long_pair(k, 2200);
            let (sa, sb) = (Sequence::from_piece(&a), Sequence::from_piece(&b));
            assert!(is_seeded(sa.len(), sb.len()), "{} × {}", sa.len(), sb.len());
            let (full, full_best) = align_full(&sa, &sb, &params);
            let (seeded, seeded_best, method) = align_seeded(&sa, &sb, &params);
            let SearchMethod::Seeded {
                cells, full_cells, ..
            } = method
            else {
                panic!("not seeded: {method:?}");
            };
            assert!(
                cells * 10 < full_cells,
                "case {k}: {cells} of {full_cells} cells"
            );
            assert!(seeded_best <= full_best, "case {k}");
            let top = &full[0];
            let found = &seeded[0];
            assert_eq!(
                (
                    found.score,
                    found.a_range,
                    found.b_range,
                    found.transposition
                ),
                (top.score, top.a_range, top.b_range, top.transposition),
                "case {k}: strongest passage"
            );
            // Every passage the full search finds that the shipped general null calls
            // significant (E ≤ 0.05 for works of these lengths) is found, with at least 90%
            // of its score; the weakest passage missed is reported.
            let e_value = |score: i32| GENERAL.e_value(f64::from(score), sa.len(), sb.len());
            let mut missed: Option<f64> = None;
            for passage in &full {
                let matched = seeded.iter().any(|s| {
                    s.a_range.0 <= passage.a_range.1
                        && passage.a_range.0 <= s.a_range.1
                        && s.b_range.0 <= passage.b_range.1
                        && passage.b_range.0 <= s.b_range.1
                        && 10 * s.score >= 9 * passage.score
                });
                let e = e_value(passage.score);
                assert!(
                    matched || e > 0.05,
                    "case {k}: full passage {:?} {:?} score {} E {e:.3} not found by seeds",
                    passage.a_range,
                    passage.b_range,
                    passage.score
                );
                if !matched {
                    missed = Some(missed.map_or(e, |m: f64| m.min(e)));
                }
            }
            format!(
                "case {k}: {} × {} notes, top score {} (E {:.1e}), {} full passages, {} seeded, \
                 {:.2}% of cells, smallest E of a passage missed {missed:?}",
                sa.len(),
                sb.len(),
                top.score,
                e_value(top.score),
                full.len(),
                seeded.len(),
                100.0 * cells as f64 / full_cells as f64
            )
        })
        .collect();
    for line in outcomes {
        println!("{line}");
    }
}

// The record and the listing say how the passages were searched for: `seeded` with its
// figures for long works, `full` for works of ordinary length.
#[test]
fn outputs_say_when_the_search_was_seeded() {
    let (a, b) = long_pair(1, 2200);
    let findings = compare_works(a, b, &CompareSettings::default(), None);
    let json = serde_json::to_value(record(&findings)).unwrap();
    assert_eq!(json["search"]["kind"], "seeded", "{}", json["search"]);
    assert!(json["search"]["bands"].as_u64().unwrap() > 0);
    let text = render_text(&findings);
    assert!(text.contains("seeded search for long works"), "{text}");
    assert!(!findings.passages.is_empty());
    let seeded_top = findings.passages[0].passage.score;

    // `--full-search`: the same long works aligned over every note pair, and said so; the
    // strongest passage is the seeded search's.
    let (a, b) = long_pair(1, 2200);
    let mut settings = CompareSettings::default();
    settings.align.full_search = true;
    let findings = compare_works(a, b, &settings, None);
    let json = serde_json::to_value(record(&findings)).unwrap();
    assert_eq!(json["search"]["kind"], "full");
    assert_eq!(json["parameters"]["full_search"], true);
    assert_eq!(findings.passages[0].passage.score, seeded_top);

    let (tunes, divisions) = tunes();
    let pairs = variant_pairs(&tunes);
    let (x, y) = pairs[0];
    let short = |t: &Tune| common::melody_piece(&t.events, divisions, 4, 4);
    let findings = compare_works(short(x), short(y), &CompareSettings::default(), None);
    let json = serde_json::to_value(record(&findings)).unwrap();
    assert_eq!(json["search"]["kind"], "full");
    assert!(!render_text(&findings).contains("seeded search"));
}

// A passage as long as a long work is written out for its opening only (`MAX_STAFF_BARS`,
// `MAX_STAFF_NOTES`),
// and the exhibit says so: the long work against itself (one passage of all of it) gives an
// exhibit of a few pages, not one page per few bars of the whole work.
#[test]
fn the_exhibit_writes_out_the_first_bars_of_a_long_passage() {
    let (tunes, divisions) = tunes();
    let events: Vec<common::Event> = tunes
        .iter()
        .filter(|t| t.set == "background")
        .take(40)
        .flat_map(|t| t.events.iter().copied())
        .collect();
    let dir = tempfile::tempdir().unwrap();
    let score = dir.path().join("long.musicxml");
    std::fs::write(&score, common::melody_xml(&events, divisions, 4, 4)).unwrap();
    let pdf = dir.path().join("exhibit.pdf");
    let score = score.to_str().unwrap();
    let (code, _, stderr) = common::run_cli(&[
        "compare",
        score,
        score,
        "--max-passages",
        "1",
        "--pdf",
        pdf.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{stderr}");
    let Ok(out) = std::process::Command::new("pdftotext")
        .arg(&pdf)
        .arg("-")
        .output()
    else {
        println!("notice: pdftotext (poppler-utils) not found; PDF text check skipped");
        return;
    };
    let text = String::from_utf8_lossy(&out.stdout);
    let flat = text.split_whitespace().collect::<Vec<_>>().join(" ");
    assert!(
        flat.contains("only its opening is written out: at most 64 bars and 96 notes"),
        "{flat}"
    );
    // One passage of 491 bars: its first 64 bars alone took 32 pages of staves.
    let pages = text.matches('\u{c}').count();
    let heads: Vec<String> = text
        .split('\u{c}')
        .map(|p| {
            p.split_whitespace()
                .skip(8)
                .take(6)
                .collect::<Vec<_>>()
                .join(" ")
        })
        .collect();
    assert!(pages < 15, "{pages} pages: {heads:#?}");
}
