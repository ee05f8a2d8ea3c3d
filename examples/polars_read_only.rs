//! Benchmark baseline for `flumerate convert`: the time polars takes just to read a logger CSV
//! (header, default schema inference, all cores), with nothing else done. Used by
//! benches/convert/run.sh; run as `cargo run --release --example polars_read_only -- FILE`.

use std::time::Instant;

use polars::prelude::*;

fn main() -> PolarsResult<()> {
    let path = std::env::args().nth(1).expect("usage: polars_read_only FILE.csv");
    let t = Instant::now();
    let df = CsvReadOptions::default()
        .with_has_header(true)
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
