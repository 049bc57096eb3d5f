//! The corpus index: round trip, damaged files, retrieval and commonness, on the public-domain
//! tunes of `tests/fixtures/tune_family/` (four members of the "Ah! vous dirai-je, maman"
//! family, four unrelated tunes).
#![allow(clippy::unwrap_used, clippy::expect_used)]

mod common;

use collatio::align::AlignParams;
use collatio::corpus::{build_from_dir, figures, slice, tokens, CorpusIndex, IndexError, NGRAM};
use collatio::features::Sequence;
use collatio::ingest::{read_file, ReadOptions};

fn index() -> CorpusIndex {
    let dir = common::fixture("tune_family");
    let built = build_from_dir(
        &dir,
        &ReadOptions::default(),
        &collatio::progress::NoProgress,
    )
    .unwrap();
    assert_eq!(built.files, 8);
    assert!(built.skipped.is_empty(), "{:?}", built.skipped);
    built.index
}

fn sequence(name: &str) -> Sequence {
    let piece = read_file(
        &common::fixture(&format!("tune_family/{name}")),
        &ReadOptions::default(),
    )
    .unwrap();
    Sequence::from_piece(&piece)
}

#[test]
fn round_trip_and_determinism() {
    let a = index().to_bytes().unwrap();
    let b = index().to_bytes().unwrap();
    assert_eq!(a, b, "two builds give the same bytes");
    let back = CorpusIndex::from_bytes(&a).unwrap();
    assert_eq!(back.melodies.len(), 8);
    assert_eq!(back.to_bytes().unwrap(), a);
}

#[test]
fn damaged_or_foreign_files_are_refused() {
    let bytes = index().to_bytes().unwrap();
    assert!(matches!(
        CorpusIndex::from_bytes(b"MThd\0\0\0\x06 not an index"),
        Err(IndexError::Foreign)
    ));
    let mut flipped = bytes.clone();
    let last = flipped.len() - 1;
    flipped[last] ^= 0xff;
    assert!(matches!(
        CorpusIndex::from_bytes(&flipped),
        Err(IndexError::Corrupt(e)) if e.contains("checksum")
    ));
    assert!(matches!(
        CorpusIndex::from_bytes(&bytes[..bytes.len() - 10]),
        Err(IndexError::Corrupt(_))
    ));
    let mut other_version = bytes.clone();
    other_version[16] = 99;
    assert!(matches!(
        CorpusIndex::from_bytes(&other_version),
        Err(IndexError::Version { found: 99 })
    ));
    assert!(matches!(
        CorpusIndex::from_bytes(&bytes[..40]),
        Err(IndexError::Corrupt(_))
    ));
}

/// IDF(τ) = ln(|C| / |{m ∈ C : τ ∈ m}|) (Müllensiefen & Pendzich 2009), computed by hand from
/// the index's own postings for the opening figure of "Twinkle".
#[test]
fn idf_follows_the_published_formula() {
    let index = index();
    let twinkle = sequence("twinkle_c_4-4.musicxml");
    let first = figures(&tokens(&twinkle), NGRAM)[0];
    let containing = index
        .melodies
        .iter()
        .filter(|m| {
            let s = Sequence::from_piece(&m.to_piece());
            figures(&tokens(&s), NGRAM).contains(&first)
        })
        .count();
    assert!(containing >= 3, "the family shares its opening");
    let expected = (8.0f64 / containing as f64).ln();
    assert!((index.idf(first) - expected).abs() < 1e-12);
}

#[test]
fn retrieval_finds_the_family_first() {
    let index = index();
    let twinkle = sequence("twinkle_c_4-4.musicxml");
    let ranked: Vec<String> = index
        .candidates(&twinkle, 8)
        .into_iter()
        .map(|(m, _)| index.melodies[m as usize].path.clone())
        .collect();
    let family = ["twinkle", "alphabet", "baa_baa"];
    for path in &ranked[..4] {
        assert!(
            family.iter().any(|f| path.contains(f)),
            "unrelated tune among the first four: {ranked:?}"
        );
    }
}

/// The first phrase of "Twinkle" (seven notes: C C G G A A G) occurs in the same notes and
/// rhythm in both Twinkle files and the alphabet song ("A B C D E F G"), and close to it in
/// "Baa, Baa" (whose A A is split into four eighths).
#[test]
fn commonness_counts_exact_and_similar() {
    let index = index();
    let twinkle = sequence("twinkle_c_4-4.musicxml");
    let phrase = slice(&twinkle, 0, 6);
    let (exact, similar) = index.commonness(&phrase, &AlignParams::default(), 0.8, 100);
    assert_eq!(exact, 3);
    assert!(similar >= 3, "similar {similar}");
}

#[test]
fn weighted_similarity_ranks_family_above_strangers() {
    let index = index();
    let twinkle = sequence("twinkle_c_4-4.musicxml");
    let kin = index.weighted_similarity(&twinkle, &sequence("alphabet_song_g_4-4.musicxml"));
    let stranger = index.weighted_similarity(&twinkle, &sequence("ode_to_joy_d.musicxml"));
    assert!(kin > 0.5, "{kin}");
    assert!(stranger < kin / 3.0, "{stranger} vs {kin}");
    let same = index.weighted_similarity(&twinkle, &twinkle);
    assert!((same - 1.0).abs() < 1e-12);
}
