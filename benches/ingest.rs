//! Parsing speed: every committed fixture read from memory into the timeline (detection,
//! decoding, layout, melody selection), plus one larger generated score.
#![allow(clippy::unwrap_used, clippy::expect_used, missing_docs)]

use collatio::ingest::{read_bytes, ReadOptions};
use criterion::{criterion_group, criterion_main, Criterion, Throughput};
use std::path::{Path, PathBuf};

fn fixtures() -> Vec<(PathBuf, Vec<u8>)> {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures");
    let mut files: Vec<PathBuf> = std::fs::read_dir(&dir)
        .map(|d| d.filter_map(|e| e.ok().map(|e| e.path())).collect())
        .unwrap_or_default();
    files.retain(|p| {
        matches!(
            p.extension().and_then(|e| e.to_str()),
            Some("mid" | "musicxml" | "mxl" | "xml")
        )
    });
    files.sort();
    files
        .into_iter()
        .filter_map(|p| std::fs::read(&p).ok().map(|b| (p, b)))
        .collect()
}

/// A 400-bar, two-part score in 4/4 with eighth notes, chords and ties: about 6,400 notes.
fn large_score() -> String {
    let mut xml = String::from(
        "<?xml version=\"1.0\"?><score-partwise version=\"4.0\"><part-list>\
         <score-part id=\"P1\"><part-name>Melody</part-name></score-part>\
         <score-part id=\"P2\"><part-name>Piano</part-name></score-part></part-list>",
    );
    let steps = ["C", "D", "E", "F", "G", "A", "B"];
    for part in ["P1", "P2"] {
        xml.push_str(&format!("<part id=\"{part}\">"));
        for bar in 1..=400 {
            xml.push_str(&format!("<measure number=\"{bar}\">"));
            if bar == 1 {
                xml.push_str(
                    "<attributes><divisions>2</divisions><time><beats>4</beats>\
                     <beat-type>4</beat-type></time></attributes>",
                );
            }
            for i in 0..8 {
                let step = steps[(bar + i) % 7];
                xml.push_str(&format!(
                    "<note><pitch><step>{step}</step><octave>4</octave></pitch>\
                     <duration>1</duration><voice>1</voice><type>eighth</type></note>"
                ));
                if part == "P2" && i % 2 == 0 {
                    xml.push_str(
                        "<note><chord/><pitch><step>C</step><octave>3</octave></pitch>\
                         <duration>1</duration><voice>1</voice><type>eighth</type></note>",
                    );
                }
            }
            xml.push_str("</measure>");
        }
        xml.push_str("</part>");
    }
    xml.push_str("</score-partwise>");
    xml
}

fn bench_ingest(c: &mut Criterion) {
    let options = ReadOptions::default();
    let files = fixtures();
    let total: usize = files.iter().map(|(_, b)| b.len()).sum();
    let mut group = c.benchmark_group("ingest");
    group.throughput(Throughput::Bytes(total as u64));
    group.bench_function(format!("all {} fixtures", files.len()), |b| {
        b.iter(|| {
            for (path, bytes) in &files {
                let _ = std::hint::black_box(read_bytes(path, bytes, &options));
            }
        })
    });
    let large = large_score();
    group.throughput(Throughput::Bytes(large.len() as u64));
    group.bench_function("400-bar two-part score", |b| {
        b.iter(|| {
            read_bytes(Path::new("large.musicxml"), large.as_bytes(), &options)
                .map(|p| p.melody.len())
        })
    });
    group.finish();
}

criterion_group!(benches, bench_ingest);
criterion_main!(benches);
