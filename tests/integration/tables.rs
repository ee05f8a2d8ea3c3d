//! `rate --breakpoints/--max-error/--segments`: the short table meets its stated error at
//! 10 000 heads between every pair of breakpoints, checked against the rating itself.

use crate::common::{flumerate, rate_json};
use flumerate::rating::RatingModel;
use flumerate::station::Station;

#[test]
fn short_tables_meet_their_stated_error_at_ten_thousand_heads_per_segment() {
    for station in [
        "ratings/ridgeway-canal-flume.toml",
        "ratings/mill-lane-outfall-vnotch.toml",
    ] {
        let st = Station::load(std::path::Path::new(station)).expect("station");
        let model = RatingModel::new(st.structure.clone()).expect("model");
        for args in [vec![station, "--max-error", "0.5"], vec![station, "--breakpoints", "6"]] {
            let doc = rate_json(std::path::Path::new(station), &args[1..]);
            let stated = doc["max_relative_error_pct"].as_f64().expect("stated") / 100.0;
            if args[1] == "--max-error" {
                assert!(stated <= 0.005, "{station}: {stated}");
            }
            let pts: Vec<(f64, f64)> = doc["breakpoints"]
                .as_array()
                .expect("points")
                .iter()
                .map(|p| (p[0].as_f64().expect("h"), p[1].as_f64().expect("q")))
                .collect();
            assert!(pts.len() >= 2);
            assert!(
                (pts[0].0 - st.range.min_head_m).abs() < 1e-12
                    && (pts[pts.len() - 1].0 - st.range.max_head_m).abs() < 1e-12
            );
            if args[1] == "--breakpoints" {
                assert!(pts.len() <= 6, "{}", pts.len());
            }
            for w in pts.windows(2) {
                let ((h0, q0), (h1, q1)) = (w[0], w[1]);
                for k in 1..10_000 {
                    let h = h0 + (h1 - h0) * k as f64 / 10_000.0;
                    let q = model.discharge_m3s(h).expect("q");
                    let lin = q0 + (q1 - q0) * (h - h0) / (h1 - h0);
                    // the stated error, to its own printing precision (1e-9 relative slack)
                    assert!(
                        ((lin - q) / q).abs() <= stated * (1.0 + 1e-9) + 1e-12,
                        "{station} {args:?} at h = {h}"
                    );
                }
            }
        }
    }
    let out = flumerate()
        .args(["rate", "ratings/ridgeway-canal-flume.toml", "--segments", "3"])
        .output()
        .expect("run");
    let text = String::from_utf8_lossy(&out.stdout);
    assert_eq!(text.matches("largest deviation").count(), 3, "{text}");
}
