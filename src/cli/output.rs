//! Writing command output: standard output (a closed pipe is not an error) or files, by the
//! rules of [`flumerate::files`]: no output may be an input or another output, files are
//! written to temporaries and renamed into place together when the command has succeeded.

use std::io::Write;
use std::path::Path;

use anyhow::Context;
use flumerate::files::{check_paths, OutputSet};

/// Checks a command's output paths against its inputs and against each other before any work
/// is done. `inputs` and `outputs` are (what or option, path); outputs not given are skipped.
pub fn check(inputs: &[(&str, &Path)], outputs: &[(&str, Option<&Path>)]) -> anyhow::Result<()> {
    let outs: Vec<(&str, &Path)> = outputs.iter().filter_map(|(f, p)| p.map(|p| (*f, p))).collect();
    check_paths(inputs, &outs)?;
    Ok(())
}

/// Writes to standard output; a closed pipe is not an error.
pub fn print(bytes: &[u8]) -> anyhow::Result<()> {
    let mut out = std::io::stdout().lock();
    match out.write_all(bytes).and_then(|_| out.flush()) {
        Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => Ok(()),
        other => other.context("writing to standard output"),
    }
}

/// Writes `bytes` to `path`, or to standard output when `path` is `None`.
pub fn emit(bytes: &[u8], path: Option<&Path>) -> anyhow::Result<()> {
    emit_all(vec![(path, bytes)])
}

/// Writes several outputs: the files together (all or none), then what goes to standard
/// output, in order.
pub fn emit_all(items: Vec<(Option<&Path>, &[u8])>) -> anyhow::Result<()> {
    let mut set = OutputSet::new();
    let mut to_stdout = Vec::new();
    for (path, bytes) in items {
        match path {
            Some(p) => set.write(p, bytes)?,
            None => to_stdout.push(bytes),
        }
    }
    set.commit()?;
    for b in to_stdout {
        print(b)?;
    }
    Ok(())
}

/// The picture format of a `--plot FILE` flag, checked before any work is done.
pub fn plot_format(plot: Option<&Path>) -> anyhow::Result<Option<flumerate::report::plot::ImageFormat>> {
    plot.map(|p| {
        flumerate::report::plot::ImageFormat::from_path(p)
            .with_context(|| format!("--plot {}: give a .png or .svg file name", p.display()))
    })
    .transpose()
}
