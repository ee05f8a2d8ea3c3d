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
    let dir = match path.parent() {
        Some(d) if !d.as_os_str().is_empty() => d,
        _ => Path::new("."),
    };
    let name = path
        .file_name()
        .with_context(|| format!("output path {} names no file", path.display()))?;
    let tmp = dir.join(format!(".{}.{}.tmp", name.to_string_lossy(), std::process::id()));
    let result = (|| -> anyhow::Result<()> {
        let mut f = std::fs::File::create(&tmp)
            .with_context(|| format!("creating {} (does the folder exist and is it writable?)", tmp.display()))?;
        f.write_all(bytes)
            .with_context(|| format!("writing {}", tmp.display()))?;
        f.sync_all().with_context(|| format!("flushing {}", tmp.display()))?;
        std::fs::rename(&tmp, path).with_context(|| format!("renaming {} to {}", tmp.display(), path.display()))
    })();
    if result.is_err() {
        let _ = std::fs::remove_file(&tmp);
    }
    result
}
