//! `flumerate network NETWORK.toml -o DIR`: converts every station of a network in parallel into
//! one Parquet dataset partitioned by station (DIR/series/station=ID/), one summary table
//! (DIR/daily.csv, station × day) and a one-page overview (DIR/overview.html). A station that
//! fails is reported and the others carry on; exit 1 if any failed.

use std::path::PathBuf;
use std::process::ExitCode;
use std::sync::atomic::{AtomicUsize, Ordering};

use anyhow::Context;
use clap::Args;
use flumerate::network::{convert_all, overview_html, summary_csv, Network, Outcome};

use super::output::emit_all;

#[derive(Debug, Args)]
pub struct NetworkArgs {
    /// Network file (TOML): [[station]] tables with id, station, logger and optional visits,
    /// baro and edits
    pub network: PathBuf,
    /// Output folder (created if missing)
    #[arg(short = 'o', long = "output", value_name = "DIR")]
    pub output: PathBuf,
    /// Stations converted at once [default: the number of cores]
    #[arg(long)]
    pub threads: Option<usize>,
    /// The "generated" time printed on the overview [default: now]
    #[arg(long)]
    pub date: Option<String>,
}

pub fn run(a: NetworkArgs) -> anyhow::Result<ExitCode> {
    let net = Network::load(&a.network)?;
    std::fs::create_dir_all(&a.output)
        .with_context(|| format!("cannot create the output folder {}", a.output.display()))?;
    let threads = a
        .threads
        .unwrap_or_else(|| std::thread::available_parallelism().map_or(1, |n| n.get()))
        .clamp(1, 64);
    let total = net.stations.len();
    let finished = AtomicUsize::new(0);
    let done = |o: &Outcome| {
        let k = finished.fetch_add(1, Ordering::Relaxed) + 1;
        match &o.result {
            Ok(r) => eprintln!(
                "[{k}/{total}] {}: {} rows, {} flagged",
                o.id,
                r.counts.per_flag.iter().sum::<usize>(),
                r.flagged_rows
            ),
            Err(e) => eprintln!("[{k}/{total}] {}: FAILED: {}", o.id, e.lines().next().unwrap_or("")),
        }
    };
    let outcomes = convert_all(&net, &a.output, threads, &done);
    let generated = a
        .date
        .clone()
        .unwrap_or_else(|| chrono::Utc::now().format("%Y-%m-%d %H:%M UTC").to_string());
    let summary = summary_csv(&outcomes).context("the summary table")?;
    let overview = overview_html(&net, &outcomes, &generated);
    let (summary_path, overview_path) = (a.output.join("daily.csv"), a.output.join("overview.html"));
    emit_all(vec![
        (Some(summary_path.as_path()), &summary[..]),
        (Some(overview_path.as_path()), overview.as_bytes()),
    ])?;
    let failed: Vec<&Outcome> = outcomes.iter().filter(|o| o.result.is_err()).collect();
    println!(
        "network {}: {} of {total} stations converted into {}/series/ (Parquet, partitioned by station); summary {}, overview {}",
        net.name,
        total - failed.len(),
        a.output.display(),
        summary_path.display(),
        overview_path.display()
    );
    for o in &failed {
        if let Err(e) = &o.result {
            println!("FAILED {}: {e}", o.id);
        }
    }
    Ok(if failed.is_empty() {
        ExitCode::SUCCESS
    } else {
        ExitCode::from(1)
    })
}
