//! The harmony layer's settings checked on music they were not chosen on.
//!
//! The neighbour share κ (7%), the averaging window, the beat grid and the embedding
//! (`HarmonyParams::default()`) were chosen on the five arrangement fixtures
//! (`tests/fixtures/arrangements/`, checked in `tests/arrangements.rs`; docs/harmony.md). Here
//! they meet the demo's scores, which played no part in that choice: "Pierside Lamps at
//! Evening" and "Millstream Boats" (invented demo case, `demo/make_demo.py`), whose chord
//! symbols (`A_CHORDS`, `B_CHORDS` there) share one progression up a minor third: the hook, A's
//! bars 9–16 (G Em | D7 G/B | Am C | D | G C | Am Em D/F# | C D | G) as B's bars 17–24 (B♭ Gm |
//! F7 B♭/D | Cm E♭ | F | B♭ E♭ | Cm Gm F/A | E♭ F | B♭), and the lead-in to it, A's bars 6–8
//! (C | Am7 D | D) against B's bars 13–16 (E♭ | Cm | F7 | F7: the same chords, the Am7 and D
//! of one bar spread over two). So the shared stretch by the chord symbols is A's bars 6–16
//! against B's bars 13–24. (The lead-in was read off the chord symbols after a first run
//! reported a passage starting there; the test's tolerance was not changed.) "Wool and
//! Weather" (D minor, 6/8) shares no progression of a bar or more with either at one
//! transposition.
#![allow(clippy::unwrap_used, clippy::expect_used)]

use collatio::align::harmony::{compare_harmony, HarmonyParams};
use collatio::features::chroma::chroma_of;
use collatio::ingest::{read_file, ReadOptions};
use collatio::timeline::ChromaLayer;
use std::path::PathBuf;

fn chroma(name: &str) -> ChromaLayer {
    let path = PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("demo")
        .join(name);
    chroma_of(&read_file(&path, &ReadOptions::default()).unwrap())
}

/// Seconds of the start of bar `bar` of a 4/4 score at `bpm` with a pickup of `pickup` beats.
fn bar_start(bar: usize, bpm: f64, pickup: f64) -> f64 {
    (pickup + 4.0 * (bar as f64 - 1.0)) * 60.0 / bpm
}

#[test]
fn the_demos_shared_progression_is_found_and_nothing_else() {
    let result = compare_harmony(
        &chroma("pierside-lamps.musicxml"),
        &chroma("millstream-boats.musicxml"),
        &HarmonyParams::default(),
    );
    for m in &result.matches {
        println!("{m:?}");
    }
    // B up a minor third, as `tests/arrangements.rs` reports larkfield against cinderpath.
    assert_eq!(result.transposition_semitones, 3, "{result:?}");
    let best = result.matches.first().expect("a harmonic passage");
    // Pierside Lamps: quarter = 96, a one-beat pickup (bar 0), bars 6–16. Millstream Boats:
    // quarter = 120, no pickup, bars 13–24. Start and end within one bar (2.5 s and 2 s).
    let (a0, a1) = (bar_start(6, 96.0, 1.0), bar_start(17, 96.0, 1.0));
    let (b0, b1) = (bar_start(13, 120.0, 0.0), bar_start(25, 120.0, 0.0));
    assert!((best.a_seconds[0] - a0).abs() < 2.5, "{best:?}");
    assert!((best.a_seconds[1] - a1).abs() < 2.5, "{best:?}");
    assert!((best.b_seconds[0] - b0).abs() < 2.0, "{best:?}");
    assert!((best.b_seconds[1] - b1).abs() < 2.0, "{best:?}");
    assert!(best.empirical_p <= 0.05, "{best:?}");
    // Any other passage would lie off the shared progression: none may be reported.
    assert_eq!(result.matches.len(), 1, "{:?}", result.matches);
}

#[test]
fn an_unrelated_progression_gives_no_harmonic_passage() {
    for other in ["pierside-lamps.musicxml", "millstream-boats.musicxml"] {
        let result = compare_harmony(
            &chroma(other),
            &chroma("unrelated-6-8.musicxml"),
            &HarmonyParams::default(),
        );
        assert!(result.matches.is_empty(), "{other}: {:?}", result.matches);
    }
}

/// The same pair with fixed-time frames (the `step` and `window` used when a work has no beat
/// grid) instead of the beat grid. Measured: one passage, A 20.0–40.2 s against B 31.3–48.0 s,
/// p = 0.01: the hook (A's bars 9–16, B's 17–24) within a bar, without the three-bar lead-in
/// that the beat grid finds. Checked: one passage, on the shared stretch (A's bars 6–16, B's
/// 13–24, within a bar), covering at least the hook.
#[test]
fn the_demos_shared_progression_with_fixed_time_frames() {
    let params = HarmonyParams {
        per_beat: 0,
        ..HarmonyParams::default()
    };
    let result = compare_harmony(
        &chroma("pierside-lamps.musicxml"),
        &chroma("millstream-boats.musicxml"),
        &params,
    );
    assert!(!result.beat_synchronous);
    assert_eq!(result.transposition_semitones, 3, "{result:?}");
    let best = result.matches.first().expect("a harmonic passage");
    // Starts between the lead-in and the hook, less or more one bar; ends with the hook.
    let (lead_a, hook_a, end_a) = (
        bar_start(6, 96.0, 1.0),
        bar_start(9, 96.0, 1.0),
        bar_start(17, 96.0, 1.0),
    );
    let (lead_b, hook_b, end_b) = (
        bar_start(13, 120.0, 0.0),
        bar_start(17, 120.0, 0.0),
        bar_start(25, 120.0, 0.0),
    );
    let a = best.a_seconds;
    let b = best.b_seconds;
    assert!(a[0] > lead_a - 2.5 && a[0] < hook_a + 2.5, "{best:?}");
    assert!(b[0] > lead_b - 2.0 && b[0] < hook_b + 2.0, "{best:?}");
    assert!((a[1] - end_a).abs() < 2.5, "{best:?}");
    assert!((b[1] - end_b).abs() < 2.0, "{best:?}");
    assert!(best.empirical_p <= 0.05, "{best:?}");
    assert_eq!(result.matches.len(), 1, "{:?}", result.matches);
}
