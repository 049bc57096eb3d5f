//! Search time against corpus size: synthetic corpora of random melodies (seeded), written to
//! an index file, then queries timed from opening the file (mapped: [`MappedIndex`]) to the
//! findings, as `collatio search` does. Prints one line per corpus size: melodies, index bytes, build seconds, and
//! the median and longest query in milliseconds, with the corpus null (default settings) and
//! without it (`--no-chance`).
//!
//! ```text
//! cargo run --release --example index_speed -- 2000 10000 100000
//! ```
#![allow(clippy::unwrap_used, clippy::expect_used)]

use collatio::corpus::{
    CorpusIndex, IndexBytes, IndexSource, MappedIndex, MelodyEntry, StoredBar, StoredNote,
};
use collatio::pipeline::{search, CorpusRef, SearchSettings};
use collatio::stats::chance::NullChoice;
use rand::{Rng, SeedableRng};
use std::time::Instant;

/// A random melody: 40–80 notes, a random walk in pitch (steps up to a fifth, within MIDI
/// 55–81), note values of a half, one, one and a half or two quarters, bars of 4/4 at 120 bpm.
fn melody(rng: &mut rand_chacha::ChaCha8Rng, k: usize) -> MelodyEntry {
    let n = rng.gen_range(40..=80);
    let mut pitch: i32 = rng.gen_range(60..=72);
    let mut onset = 0.0f32;
    let mut notes = Vec::with_capacity(n);
    for _ in 0..n {
        pitch = (pitch + rng.gen_range(-5..=5)).clamp(55, 81);
        let duration = [0.5f32, 1.0, 1.5, 2.0][rng.gen_range(0..4)];
        notes.push(StoredNote {
            pitch: pitch as f32,
            onset,
            duration,
            onset_seconds: onset * 0.5,
            duration_seconds: duration * 0.5,
            bar: (onset / 4.0) as u32,
            offset_in_bar: onset % 4.0,
        });
        onset += duration;
    }
    let bars = (0..=(onset / 4.0) as u32)
        .map(|b| StoredBar {
            label: (b + 1).to_string(),
            start: b as f32 * 4.0,
            start_seconds: b as f32 * 2.0,
            length: 4.0,
            time_signature: (4, 4),
            pickup: false,
        })
        .collect();
    MelodyEntry {
        path: format!("synthetic/{k:07}.mid"),
        sha256: format!("{k:064x}"),
        title: Some(format!("Synthetic {k}")),
        part: "P1".into(),
        notes,
        bars,
        key: Some((0, false)),
    }
}

/// The query: notes 10–39 of a corpus melody, transposed up a tone.
fn query(m: &MelodyEntry) -> MelodyEntry {
    let mut q = m.clone();
    q.path = "query.mid".into();
    q.notes = q.notes[10..40].to_vec();
    for n in &mut q.notes {
        n.pitch += 2.0;
    }
    q
}

fn open_and_search(path: &std::path::Path, q: &MelodyEntry, settings: &SearchSettings) -> usize {
    let file = std::fs::File::open(path).unwrap();
    let index = MappedIndex::open(IndexBytes::map(&file).unwrap()).unwrap();
    let source = IndexSource::of_mapped(&path.display().to_string(), &index);
    let found = search(
        q.to_piece(),
        CorpusRef {
            index: &index,
            source: &source,
        },
        settings,
    );
    assert!(index.failure().is_none());
    found.hits.len()
}

fn open_and_read(path: &std::path::Path, q: &MelodyEntry) -> usize {
    use collatio::corpus::Corpus;
    let file = std::fs::File::open(path).unwrap();
    let index = MappedIndex::open(IndexBytes::map(&file).unwrap()).unwrap();
    let seq = collatio::features::Sequence::from_piece(&q.to_piece());
    let settings = SearchSettings::default();
    let pool = index.candidates(&seq, settings.candidates);
    let refs = collatio::pipeline::reference_melodies(
        &index,
        settings.chance.references,
        settings.chance.shuffles.seed,
    );
    let read = pool
        .iter()
        .filter_map(|&(m, _)| index.melody(m as usize))
        .count();
    assert!(index.failure().is_none());
    read + refs.len()
}

fn median(mut xs: Vec<f64>) -> f64 {
    xs.sort_by(f64::total_cmp);
    xs[xs.len() / 2]
}

fn main() {
    let sizes: Vec<usize> = std::env::args()
        .skip(1)
        .map(|s| s.parse().expect("corpus sizes in melodies"))
        .collect();
    let dir = tempfile::tempdir().unwrap();
    println!(
        "melodies\tindex_bytes\tbuild_s\tmedian_ms\tmax_ms\tno_chance_median_ms\tno_chance_max_ms\tindex_median_ms\tindex_max_ms"
    );
    for &size in &sizes {
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(16);
        let melodies: Vec<MelodyEntry> = (0..size).map(|k| melody(&mut rng, k)).collect();
        let queries: Vec<MelodyEntry> = (0..9).map(|i| query(&melodies[i * size / 9])).collect();
        let t = Instant::now();
        let index = CorpusIndex::build(melodies);
        let bytes = index.to_bytes().unwrap();
        drop(index);
        let path = dir.path().join(format!("synthetic-{size}.idx"));
        std::fs::write(&path, &bytes).unwrap();
        let build = t.elapsed().as_secs_f64();
        let mut row = vec![];
        for null in [NullChoice::Auto, NullChoice::Off] {
            let mut settings = SearchSettings::default();
            settings.chance.null = null;
            open_and_search(&path, &queries[0], &settings); // warm the page cache
            let times: Vec<f64> = queries
                .iter()
                .map(|q| {
                    let t = Instant::now();
                    assert!(open_and_search(&path, q, &settings) > 0);
                    t.elapsed().as_secs_f64() * 1e3
                })
                .collect();
            row.push(median(times.clone()));
            row.push(times.iter().copied().fold(0.0, f64::max));
        }
        let times: Vec<f64> = queries
            .iter()
            .map(|q| {
                let t = Instant::now();
                assert!(open_and_read(&path, q) > 0);
                t.elapsed().as_secs_f64() * 1e3
            })
            .collect();
        row.push(median(times.clone()));
        row.push(times.iter().copied().fold(0.0, f64::max));
        println!(
            "{size}\t{}\t{build:.1}\t{:.1}\t{:.1}\t{:.1}\t{:.1}\t{:.1}\t{:.1}",
            bytes.len(),
            row[0],
            row[1],
            row[2],
            row[3],
            row[4],
            row[5]
        );
    }
}
