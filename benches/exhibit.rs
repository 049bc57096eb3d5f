//! Time to write the demo exhibit: the PDF alone, and the PDF with the JSON record and the
//! passage exports, from pieces already read and compared (reading and aligning have their own
//! benchmarks). Target: under one second. The PDF's size is printed once.
#![allow(clippy::unwrap_used, clippy::expect_used, missing_docs)]

use collatio::ingest::{read_file, ReadOptions};
use collatio::report::exhibit::{write_exhibit, Exhibit, ExhibitOptions, Outputs};
use criterion::{criterion_group, criterion_main, Criterion};
use std::path::Path;

fn bench(c: &mut Criterion) {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo");
    let a = read_file(
        &root.join("pierside-lamps.musicxml"),
        &ReadOptions::default(),
    )
    .unwrap();
    let b = read_file(
        &root.join("millstream-boats.musicxml"),
        &ReadOptions::default(),
    )
    .unwrap();
    let findings = collatio::pipeline::compare_works(
        a,
        b,
        &collatio::findings::CompareSettings::default(),
        None,
    );
    let options = ExhibitOptions {
        case_label: Some("Holloway v. Wren (invented demo case)".into()),
        date: Some("2025-06-01".into()),
        ..ExhibitOptions::default()
    };
    let exhibit = Exhibit::new(&findings, &options).unwrap();
    let (bytes, pages) = collatio::report::pdf::render(&exhibit).unwrap();
    eprintln!("demo exhibit: {} bytes, {pages} pages", bytes.len());

    let mut group = c.benchmark_group("exhibit");
    group.sample_size(20);
    group.bench_function("demo_pdf_render", |bench| {
        bench.iter(|| {
            let exhibit = Exhibit::new(&findings, &options).unwrap();
            collatio::report::pdf::render(&exhibit).unwrap()
        })
    });
    let dir = tempfile::tempdir().unwrap();
    let outputs = Outputs {
        pdf: Some(dir.path().join("exhibit.pdf")),
        json: Some(dir.path().join("findings.json")),
        export_dir: Some(dir.path().join("passages")),
    };
    group.bench_function("demo_all_files_written", |bench| {
        bench.iter(|| write_exhibit(&findings, &options, &outputs).unwrap())
    });
    group.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
