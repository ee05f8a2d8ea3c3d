//! Rating speed. Target (issue 2): a 10 000-row boundary-layer rating in at most 50 ms.
//! Run: `cargo bench --bench rating`. The figures are reported in the closing notes, not
//! asserted by any test.

use std::hint::black_box;
use std::path::Path;

use criterion::{criterion_group, criterion_main, Criterion};
use flumerate::rating::{head_sequence, RatingModel, RatingTable};
use flumerate::station::Station;

fn model(file: &str) -> (RatingModel, Vec<f64>) {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("ratings").join(file);
    let station = Station::load(&path).expect("demo station loads");
    let r = station.range;
    let heads = head_sequence(r.min_head_m, r.max_head_m, (r.max_head_m - r.min_head_m) / 9_999.0).expect("heads");
    assert_eq!(heads.len(), 10_000);
    (RatingModel::new(station.structure).expect("model"), heads)
}

fn bench(c: &mut Criterion) {
    let mut group = c.benchmark_group("rating_10000_rows");
    group.sample_size(20);
    for file in [
        "ridgeway-canal-flume.toml",
        "alder-brook-weir.toml",
        "mill-lane-effluent-flume.toml",
        "fernhill-drain-survey.toml",
    ] {
        let (m, heads) = model(file);
        group.bench_function(file.trim_end_matches(".toml"), |b| {
            b.iter(|| RatingTable::compute(black_box(&m), black_box(&heads)))
        });
    }
    group.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
