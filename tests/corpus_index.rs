//! The corpus index: round trip, damaged files, retrieval and commonness, on the public-domain
//! tunes of `tests/fixtures/tune_family/` (four members of the "Ah! vous dirai-je, maman"
//! family, four unrelated tunes).
#![allow(clippy::unwrap_used, clippy::expect_used)]

mod common;

use collatio::align::AlignParams;
use collatio::corpus::{
    build_from_dir, figures, slice, tokens, Corpus, CorpusIndex, IndexError, NGRAM,
};
use collatio::features::Sequence;
use collatio::ingest::{read_file, ReadOptions};

fn index() -> CorpusIndex {
    let dir = common::fixture("tune_family");
    let built = build_from_dir(
        &dir,
        &ReadOptions::default(),
        collatio::compare::pairing::DEFAULT_CANDIDATES,
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
    let (exact, similar) =
        collatio::corpus::assess::commonness(&index, &phrase, &AlignParams::default(), 0.8, 100);
    assert_eq!(exact, 3);
    assert!(similar >= 3, "similar {similar}");
}

#[test]
fn weighted_similarity_ranks_family_above_strangers() {
    let index = index();
    let twinkle = sequence("twinkle_c_4-4.musicxml");
    let kin = collatio::corpus::assess::weighted_similarity(
        &index,
        &twinkle,
        &sequence("alphabet_song_g_4-4.musicxml"),
    );
    let stranger = collatio::corpus::assess::weighted_similarity(
        &index,
        &twinkle,
        &sequence("ode_to_joy_d.musicxml"),
    );
    assert!(kin > 0.5, "{kin}");
    assert!(stranger < kin / 3.0, "{stranger} vs {kin}");
    let same = collatio::corpus::assess::weighted_similarity(&index, &twinkle, &twinkle);
    assert!((same - 1.0).abs() < 1e-12);
}

/// The index read in place (format 3) gives the same search and comparison records, byte for
/// byte, as the same corpus read whole from the previous format: every fixture as the query,
/// default settings (corpus null included), one record of the index for both.
#[test]
fn mapped_index_gives_the_same_findings_as_the_index_in_memory() {
    use collatio::corpus::{IndexBytes, IndexSource, MappedIndex};
    use collatio::findings::CompareSettings;
    use collatio::pipeline::{compare_works, search, CorpusRef, SearchSettings};
    let built = index();
    let legacy = built.to_legacy_bytes().unwrap();
    let whole = CorpusIndex::from_bytes(&legacy).unwrap();
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("tunes.idx");
    std::fs::write(&path, built.to_bytes().unwrap()).unwrap();
    let file = std::fs::File::open(&path).unwrap();
    let mapped = MappedIndex::open(IndexBytes::map(&file).unwrap()).unwrap();
    mapped.verify().unwrap();
    let source = IndexSource::new("tunes.idx", &legacy, &whole);
    let mut names: Vec<_> = std::fs::read_dir(common::fixture("tune_family"))
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|e| e == "musicxml"))
        .collect();
    names.sort();
    assert_eq!(names.len(), 8);
    for name in &names {
        let query = read_file(name, &ReadOptions::default()).unwrap();
        let record = |index: &dyn Corpus| {
            let corpus = CorpusRef {
                index,
                source: &source,
            };
            let found = search(query.clone(), corpus, &SearchSettings::default());
            serde_json::to_string_pretty(&collatio::report::search::record(&found)).unwrap()
        };
        let expected = record(&whole);
        assert!(expected.contains("\"hits\""));
        assert_eq!(record(&mapped), expected, "{}", name.display());
    }
    let a = read_file(&names[0], &ReadOptions::default()).unwrap();
    let b = read_file(&names[1], &ReadOptions::default()).unwrap();
    let compared = |index: &dyn Corpus| {
        let corpus = CorpusRef {
            index,
            source: &source,
        };
        let found = compare_works(
            a.clone(),
            b.clone(),
            &CompareSettings::default(),
            Some(corpus),
        );
        serde_json::to_string(&collatio::report::compare::record(&found)).unwrap()
    };
    assert_eq!(compared(&mapped), compared(&whole));
    assert!(mapped.failure().is_none());
    assert_eq!(
        mapped.to_index().unwrap().to_bytes().unwrap(),
        built.to_bytes().unwrap()
    );
}

/// A damaged section of an index read in place: opening succeeds (only the table is read),
/// the damage is found when the section is read, and always by `verify`.
#[test]
fn damaged_section_is_found_when_read() {
    use collatio::corpus::{IndexBytes, MappedIndex};
    let mut bytes = index().to_bytes().unwrap();
    let last = bytes.len() - 1;
    bytes[last] ^= 0xff;
    let mapped = MappedIndex::open(IndexBytes::Owned(bytes)).unwrap();
    assert!(mapped.failure().is_none());
    let err = mapped.verify().unwrap_err();
    assert!(
        err.to_string().contains("checksum mismatch in section"),
        "{err}"
    );
    assert!(mapped.melody(7).is_none());
    assert!(matches!(mapped.failure(), Some(IndexError::Corrupt(_))));
    // Earlier melodies live in sections of their own and are still read.
    assert!(mapped.melody(0).is_some());
}

/// Every single byte of an index file is covered by a check: flipping any one of them makes
/// the file foreign or corrupt, on opening or in `verify`, and reading the damaged index never
/// panics.
#[test]
fn every_byte_of_the_file_is_checked() {
    use collatio::corpus::{IndexBytes, MappedIndex};
    let good = index().to_bytes().unwrap();
    let query = sequence("twinkle_c_4-4.musicxml");
    for at in 0..good.len() {
        let mut bytes = good.clone();
        bytes[at] ^= 0x5a;
        assert!(CorpusIndex::from_bytes(&bytes).is_err(), "byte {at}");
        if let Ok(mapped) = MappedIndex::open(IndexBytes::Owned(bytes)) {
            assert!(mapped.verify().is_err(), "byte {at}");
            let _ = mapped.candidates(&query, 100);
            for m in 0..mapped.melody_count() {
                let _ = mapped.melody(m);
            }
        }
    }
}
