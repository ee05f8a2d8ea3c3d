//! Monte Carlo speed. Target (issue 3): 100 000 draws over a 200-row rating in at most 1 s on
//! this 2-core machine. Run: `cargo bench --bench uncertainty`.

use std::hint::black_box;
use std::path::Path;

use criterion::{criterion_group, criterion_main, Criterion};
use flumerate::rating::{head_sequence, RatingModel};
use flumerate::station::Station;
use flumerate::uncertainty::{monte_carlo, GumModel, Inputs, McOptions};

fn bench(c: &mut Criterion) {
    let mut group = c.benchmark_group("uncertainty_200_rows");
    group.sample_size(10);
    for file in ["ridgeway-canal-flume.toml", "mill-lane-effluent-flume.toml"] {
        let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("ratings").join(file);
        let st = Station::load(&path).expect("demo station");
        let inputs = Inputs::from_station(&st.uncertainty, &st.structure);
        let r = st.range;
        let heads = head_sequence(r.min_head_m, r.max_head_m, (r.max_head_m - r.min_head_m) / 199.0).expect("heads");
        assert_eq!(heads.len(), 200);
        let model = RatingModel::new(st.structure).expect("model");
        let name = file.trim_end_matches(".toml");
        group.bench_function(format!("monte_carlo_100k_draws/{name}"), |b| {
            let opts = McOptions {
                draws: 100_000,
                seed: 1,
                threads: 2,
            };
            b.iter(|| monte_carlo(black_box(&model), black_box(&inputs), black_box(&heads), &opts).expect("mc"))
        });
        group.bench_function(format!("gum/{name}"), |b| {
            b.iter(|| {
                let g = GumModel::new(black_box(&model), inputs.clone()).expect("gum");
                heads.iter().map(|&h| g.point(h).expect("point").u_rel).sum::<f64>()
            })
        });
    }
    group.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
