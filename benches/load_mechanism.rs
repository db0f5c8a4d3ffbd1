//! Loading and validating a 10,000-species, 30,000-step mechanism file (aim: under one second),
//! against the baseline of a bare TOML parse of the same text into a generic table, measured in
//! the same run. Results: benches/README.md.

mod common;

use criterion::{criterion_group, criterion_main, Criterion};
use std::hint::black_box;

fn load(c: &mut Criterion) {
    let text = common::synthetic_mechanism_text(10_000, 7);
    let mut group = c.benchmark_group("load_10000_species");
    group.bench_function("toml_parse_only_baseline", |b| {
        b.iter(|| black_box(text.parse::<toml::Table>().map(|t| t.len()).unwrap_or(0)))
    });
    group.bench_function("stoik_load_and_validate", |b| {
        b.iter(|| {
            let file = stoik::mechanism::parse_mechanism(black_box(&text), "synthetic.toml")
                .map(|f| f.mechanism.steps.len())
                .unwrap_or(0);
            assert_eq!(file, 30_000);
        })
    });
    group.finish();
}

criterion_group! {
    name = benches;
    config = Criterion::default().sample_size(10);
    targets = load
}
criterion_main!(benches);
