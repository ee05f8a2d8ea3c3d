//! Benchmark baseline for `flumerate convert`: the time polars takes just to read a logger CSV
//! (header, default schema inference, all cores), with nothing else done. With `--dates` polars
//! also parses the timestamps while reading (a second, stricter baseline). Used by
//! benches/convert/run.sh; run as `cargo run --release --example polars_read_only -- FILE [--dates]`.

use std::time::Instant;

use polars::prelude::*;

fn main() -> PolarsResult<()> {
    let path = std::env::args()
        .nth(1)
        .expect("usage: polars_read_only FILE.csv [--dates]");
    let dates = std::env::args().any(|a| a == "--dates");
    let t = Instant::now();
    let df = CsvReadOptions::default()
        .with_has_header(true)
        .map_parse_options(|o| o.with_try_parse_dates(dates))
        .try_into_reader_with_file_path(Some(path.into()))?
        .finish()?;
    eprintln!(
        "polars read {} rows x {} columns in {:.3} s",
        df.height(),
        df.width(),
        t.elapsed().as_secs_f64()
    );
    Ok(())
}
