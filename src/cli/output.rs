//! Writing command output: standard output (a closed pipe is not an error) or a file written
//! atomically (temporary file in the same folder, then rename), so an interrupted run never
//! leaves a partial file under the final name.

use std::io::Write;
use std::path::Path;

use anyhow::Context;

/// Writes `bytes` to `path`, or to standard output when `path` is `None`.
pub fn emit(bytes: &[u8], path: Option<&Path>) -> anyhow::Result<()> {
    match path {
        None => {
            let mut out = std::io::stdout().lock();
            match out.write_all(bytes).and_then(|_| out.flush()) {
                Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => Ok(()),
                other => other.context("writing to standard output"),
            }
        }
        Some(p) => write_atomic(p, bytes),
    }
}

/// Writes a whole file via a temporary sibling and a rename.
pub fn write_atomic(path: &Path, bytes: &[u8]) -> anyhow::Result<()> {
    path.file_name()
        .with_context(|| format!("output path {} names no file", path.display()))?;
    let tmp = flumerate::series::output::temp_path(path);
    let result = (|| -> anyhow::Result<()> {
        let mut f = std::fs::File::create(&tmp)
            .with_context(|| format!("creating {} (does the folder exist and is it writable?)", tmp.display()))?;
        f.write_all(bytes)
            .with_context(|| format!("writing {}", tmp.display()))?;
        f.sync_all().with_context(|| format!("flushing {}", tmp.display()))?;
        flumerate::series::output::commit(&tmp, path)
            .with_context(|| format!("renaming {} to {}", tmp.display(), path.display()))
    })();
    if result.is_err() {
        let _ = std::fs::remove_file(&tmp);
    }
    result
}

/// The picture format of a `--plot FILE` flag, checked before any work is done.
pub fn plot_format(plot: Option<&Path>) -> anyhow::Result<Option<flumerate::report::plot::ImageFormat>> {
    plot.map(|p| {
        flumerate::report::plot::ImageFormat::from_path(p)
            .with_context(|| format!("--plot {}: give a .png or .svg file name", p.display()))
    })
    .transpose()
}
