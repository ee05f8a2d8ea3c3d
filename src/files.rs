//! Writing output files so that no input is ever lost and a run's outputs appear together.
//!
//! Rules (README, "Files flumerate writes"):
//! - An output path that names an input of the run, or another output of it, is an error before
//!   anything is written ([`check_paths`]). Paths are compared as the files they name: the same
//!   file reached by another spelling, a symbolic link or a hard link is the same file.
//! - An output whose final component is a symbolic link is refused: flumerate does not decide for
//!   the user whether the link or the file it points to should be replaced. Give the target's own
//!   path.
//! - An output that exists and is not a regular file (a device such as `/dev/null`, a named
//!   pipe) is written to directly, never replaced or removed.
//! - Every other output is written to a temporary file created exclusively, with an
//!   unpredictable name, in the output's own folder ([`tempfile`]), and renamed over the output
//!   only when the whole run has succeeded ([`OutputSet::commit`]). The renames of one run happen
//!   together: if one fails, the outputs already renamed are put back as they were (the previous
//!   files are kept as hard links until the end). Temporary files are removed on error, on
//!   Ctrl-C and on SIGTERM ([`remove_temporaries`], called by the command's signal handler,
//!   which waits for a commit under way to finish or roll back). A SIGKILL cannot be caught: it
//!   may leave a `.NAME.*.tmp` file beside the output, never a partial output under its name.

use std::fs::File;
use std::io::Write;
use std::path::{Path, PathBuf};
use std::sync::Mutex;

/// Temporary files (and kept previous outputs) of the running process, for the signal handler.
static LIVE: Mutex<Vec<PathBuf>> = Mutex::new(Vec::new());

/// A file-safety rule broken, or an I/O failure while writing outputs.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum FileError {
    /// An output names an input.
    #[error("{output_flag} {output} is the same file as the {input_what} {input}: writing it would destroy the input\n  fix: give the output another name")]
    OutputIsInput {
        /// The output's option.
        output_flag: String,
        /// The output path.
        output: String,
        /// What the input is.
        input_what: String,
        /// The input path.
        input: String,
    },
    /// Two outputs name one file.
    #[error("{first_flag} {first} and {second_flag} {second} are the same file: one output would overwrite the other\n  fix: give each output its own name")]
    SameOutput {
        /// One option.
        first_flag: String,
        /// Its path.
        first: String,
        /// The other option.
        second_flag: String,
        /// Its path.
        second: String,
    },
    /// An output is a symbolic link.
    #[error("{flag} {path} is a symbolic link: flumerate does not replace links or write through them\n  fix: give the path of the file it points to ({target}), or remove the link")]
    Symlink {
        /// The option.
        flag: String,
        /// The path.
        path: String,
        /// Where the link points.
        target: String,
    },
    /// An output names a folder.
    #[error("{flag} {path} is a folder\n  fix: give a file name inside it")]
    Folder {
        /// The option.
        flag: String,
        /// The path.
        path: String,
    },
    /// An I/O failure.
    #[error("{what} {path}")]
    Io {
        /// What was being done.
        what: String,
        /// The path.
        path: String,
        /// The cause.
        source: std::io::Error,
    },
}

fn io<'a>(what: &str, path: &'a Path) -> impl FnOnce(std::io::Error) -> FileError + 'a {
    let what = what.to_string();
    move |source| FileError::Io {
        what,
        path: path.display().to_string(),
        source,
    }
}

/// The identity of a path's file: device and inode where the file exists (so links and other
/// spellings compare equal), else the canonical folder joined with the name.
#[derive(Debug, Clone, PartialEq, Eq)]
enum Identity {
    #[cfg(unix)]
    Inode(u64, u64),
    Path(PathBuf),
}

fn identity(path: &Path) -> Identity {
    #[cfg(unix)]
    {
        use std::os::unix::fs::MetadataExt;
        if let Ok(m) = std::fs::metadata(path) {
            return Identity::Inode(m.dev(), m.ino());
        }
    }
    let dir = path
        .parent()
        .filter(|d| !d.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    let dir = std::fs::canonicalize(dir).unwrap_or_else(|_| dir.to_path_buf());
    Identity::Path(match path.file_name() {
        Some(n) => dir.join(n),
        None => path.to_path_buf(),
    })
}

/// Checks a run's paths before anything is written: no output is an input, no two outputs are
/// one file, no output is a symbolic link or a folder. `inputs` and `outputs` are (what or
/// option, path).
pub fn check_paths(inputs: &[(&str, &Path)], outputs: &[(&str, &Path)]) -> Result<(), FileError> {
    for (flag, p) in outputs {
        if let Ok(m) = std::fs::symlink_metadata(p) {
            if m.file_type().is_symlink() {
                return Err(FileError::Symlink {
                    flag: flag.to_string(),
                    path: p.display().to_string(),
                    target: std::fs::read_link(p).map_or_else(|_| "?".into(), |t| t.display().to_string()),
                });
            }
            if m.is_dir() {
                return Err(FileError::Folder {
                    flag: flag.to_string(),
                    path: p.display().to_string(),
                });
            }
        }
    }
    let ids: Vec<Identity> = outputs.iter().map(|(_, p)| identity(p)).collect();
    for (k, (flag, p)) in outputs.iter().enumerate() {
        for (what, input) in inputs {
            if identity(input) == ids[k] {
                return Err(FileError::OutputIsInput {
                    output_flag: flag.to_string(),
                    output: p.display().to_string(),
                    input_what: what.to_string(),
                    input: input.display().to_string(),
                });
            }
        }
        for (j, (flag2, p2)) in outputs.iter().enumerate().take(k) {
            if ids[j] == ids[k] {
                return Err(FileError::SameOutput {
                    first_flag: flag2.to_string(),
                    first: p2.display().to_string(),
                    second_flag: flag.to_string(),
                    second: p.display().to_string(),
                });
            }
        }
    }
    Ok(())
}

/// Whether `path` exists and is not a regular file (a device, a named pipe, a socket): such an
/// output is written to directly.
pub fn is_special(path: &Path) -> bool {
    std::fs::metadata(path).is_ok_and(|m| !m.is_file() && !m.is_dir())
}

fn register(p: &Path) {
    if let Ok(mut live) = LIVE.lock() {
        live.push(p.to_path_buf());
    }
}

fn unregister(p: &Path) {
    if let Ok(mut live) = LIVE.lock() {
        live.retain(|q| q != p);
    }
}

/// Removes every temporary file of the process. Called by the signal handler before it exits;
/// it waits for a commit under way (which holds the lock) to finish or roll back first.
pub fn remove_temporaries() {
    let live = match LIVE.lock() {
        Ok(mut l) => std::mem::take(&mut *l),
        Err(poisoned) => std::mem::take(&mut *poisoned.into_inner()),
    };
    for p in live {
        let _ = std::fs::remove_file(p);
    }
}

/// One output of a run: a temporary file beside it, or the special file itself.
#[derive(Debug)]
struct Staged {
    path: PathBuf,
    temp: Option<tempfile::TempPath>,
}

/// The outputs of one run, written to temporaries and committed together.
#[derive(Debug, Default)]
pub struct OutputSet {
    staged: Vec<Staged>,
}

impl OutputSet {
    /// No outputs yet.
    pub fn new() -> Self {
        Self::default()
    }

    /// Opens an output for writing: a fresh temporary file in the output's folder, or the
    /// output itself when it is a special file. The bytes written reach `path` at
    /// [`OutputSet::commit`].
    pub fn create(&mut self, path: &Path) -> Result<File, FileError> {
        if is_special(path) {
            let f = std::fs::OpenOptions::new()
                .write(true)
                .open(path)
                .map_err(io("opening", path))?;
            self.staged.push(Staged {
                path: path.to_path_buf(),
                temp: None,
            });
            return Ok(f);
        }
        let name = path
            .file_name()
            .map_or_else(|| "out".into(), |n| n.to_string_lossy().to_string());
        let dir = path
            .parent()
            .filter(|d| !d.as_os_str().is_empty())
            .unwrap_or(Path::new("."));
        let prefix = format!(".{name}.");
        let mut builder = tempfile::Builder::new();
        builder.prefix(&prefix).suffix(".tmp");
        // the output gets the permissions a plain file would (0666 less the umask), or keeps
        // those of the file it replaces; a temporary's own 0600 would hide it from the group
        #[cfg(unix)]
        {
            use std::os::unix::fs::PermissionsExt;
            let mode = std::fs::metadata(path).map_or(0o666, |m| m.permissions().mode() & 0o7777);
            builder.permissions(std::fs::Permissions::from_mode(mode));
        }
        let named = builder.tempfile_in(dir).map_err(io(
            "creating a temporary file (does the folder exist and is it writable?) for",
            path,
        ))?;
        let (file, temp) = named.into_parts();
        register(&temp);
        self.staged.push(Staged {
            path: path.to_path_buf(),
            temp: Some(temp),
        });
        Ok(file)
    }

    /// Writes a whole output at once.
    pub fn write(&mut self, path: &Path, bytes: &[u8]) -> Result<(), FileError> {
        let mut f = self.create(path)?;
        f.write_all(bytes).map_err(io("writing", path))?;
        f.flush().map_err(io("writing", path))
    }

    /// Moves every temporary into place, all or none: when a rename fails, the outputs already
    /// renamed are put back as they were and the error is returned. Special files were written
    /// directly and stay as written.
    pub fn commit(mut self) -> Result<(), FileError> {
        // every temporary on disk first, outside the lock (a failure leaves every output as it
        // was): another run committing at the same time, as a network's stations do, need not
        // wait for these flushes
        for s in &self.staged {
            if let Some(temp) = &s.temp {
                File::open(temp)
                    .and_then(|f| f.sync_all())
                    .map_err(io("flushing", &s.path))?;
            }
        }
        // the signal handler waits on this lock: no exit half-way through the renames
        let mut live = LIVE.lock().unwrap_or_else(std::sync::PoisonError::into_inner);
        let mut done: Vec<(PathBuf, Option<PathBuf>)> = Vec::new();
        let mut failure = None;
        for s in self.staged.iter_mut() {
            let Some(temp) = s.temp.take() else { continue };
            match Self::commit_one(&s.path, temp) {
                Ok((temp_path, backup)) => {
                    live.retain(|q| q != &temp_path);
                    done.push((s.path.clone(), backup));
                }
                Err((temp, e)) => {
                    s.temp = Some(temp);
                    failure = Some(e);
                    break;
                }
            }
        }
        let Some(err) = failure else {
            for (_, backup) in done {
                if let Some(b) = backup {
                    let _ = std::fs::remove_file(b);
                }
            }
            return Ok(());
        };
        for (path, backup) in done.into_iter().rev() {
            match backup {
                Some(b) => {
                    let _ = std::fs::rename(&b, &path);
                }
                None => {
                    let _ = std::fs::remove_file(&path);
                }
            }
        }
        Err(err)
    }

    /// Keeps the previous output as a hard link and renames the temporary (already on disk)
    /// over the output. Returns the temporary's former path and the kept previous output, or
    /// gives the temporary back with the error.
    #[allow(clippy::result_large_err)]
    fn commit_one(
        path: &Path,
        temp: tempfile::TempPath,
    ) -> Result<(PathBuf, Option<PathBuf>), (tempfile::TempPath, FileError)> {
        let backup = if std::fs::metadata(path).is_ok_and(|m| m.is_file()) {
            let dir = path
                .parent()
                .filter(|d| !d.as_os_str().is_empty())
                .unwrap_or(Path::new("."));
            let kept = tempfile::Builder::new()
                .prefix(".flumerate-previous.")
                .make_in(dir, |p| std::fs::hard_link(path, p))
                .and_then(|b| b.into_temp_path().keep().map_err(|e| e.error));
            match kept {
                Ok(b) => Some(b),
                Err(e) => return Err((temp, io("keeping the previous version of", path)(e))),
            }
        } else {
            None
        };
        let temp_path = temp.to_path_buf();
        match temp.persist(path) {
            Ok(()) => Ok((temp_path, backup)),
            Err(e) => {
                if let Some(b) = &backup {
                    let _ = std::fs::remove_file(b);
                }
                Err((e.path, io("renaming the finished output into place at", path)(e.error)))
            }
        }
    }
}

impl Drop for OutputSet {
    /// Temporaries of a run that did not commit are removed.
    fn drop(&mut self) {
        for s in &mut self.staged {
            if let Some(t) = s.temp.take() {
                let p = t.to_path_buf();
                drop(t);
                unregister(&p);
            }
        }
    }
}

/// Bytes written between two requests to the disk to catch up (see [`WriteBehind`]); 4 KiB in
/// unit tests, so that their small files are flushed behind too.
const WRITE_BEHIND_BYTES: u64 = if cfg!(test) { 4 << 10 } else { 64 << 20 };

/// A large output file whose data go to disk while it is still being written: every 64 MiB a
/// thread of its own flushes what has been written so far (`fdatasync`), so that the flush before
/// the output is renamed into place ([`OutputSet::commit`]) has little left to wait for. The first
/// failure of those flushes is kept and returned by [`WriteBehind::finish`]: a write error must
/// not be lost, since a later flush through another handle may not report it again.
pub struct WriteBehind {
    file: File,
    unsynced: u64,
    syncer: Option<(
        std::sync::mpsc::SyncSender<()>,
        std::thread::JoinHandle<std::io::Result<()>>,
    )>,
}

impl WriteBehind {
    /// Writes into `file`, flushing behind the writing when it is a regular file.
    pub fn new(file: File) -> Self {
        let syncer = file
            .metadata()
            .ok()
            .filter(std::fs::Metadata::is_file)
            .and_then(|_| file.try_clone().ok())
            .map(|clone| {
                // one request waits at most: a request made while one is waiting adds nothing
                let (tx, rx) = std::sync::mpsc::sync_channel::<()>(1);
                let handle = std::thread::spawn(move || {
                    for () in rx {
                        clone.sync_data()?;
                    }
                    Ok(())
                });
                (tx, handle)
            });
        Self {
            file,
            unsynced: 0,
            syncer,
        }
    }

    /// Waits for the flushes behind the writing; the first that failed is the error.
    pub fn finish(mut self) -> std::io::Result<File> {
        if let Some((tx, handle)) = self.syncer.take() {
            drop(tx);
            handle
                .join()
                .map_err(|_| std::io::Error::other("the thread flushing the output stopped"))??;
        }
        Ok(self.file)
    }
}

impl Write for WriteBehind {
    fn write(&mut self, buf: &[u8]) -> std::io::Result<usize> {
        let n = self.file.write(buf)?;
        self.unsynced += n as u64;
        if self.unsynced >= WRITE_BEHIND_BYTES {
            self.unsynced = 0;
            if let Some((tx, _)) = &self.syncer {
                // full: a flush is already asked for; gone: a flush failed, which finish reports
                let _ = tx.try_send(());
            }
        }
        Ok(n)
    }

    fn flush(&mut self) -> std::io::Result<()> {
        self.file.flush()
    }
}

/// A small input file (an edits log, gaugings, a side file) read whole, with the SHA-256 of the
/// same bytes for the provenance. The error is in words, for the caller's own error type.
pub fn read_hashed(path: &Path) -> Result<(Vec<u8>, String), String> {
    use sha2::Digest;
    let bytes = std::fs::read(path).map_err(|e| format!("cannot read it: {e}"))?;
    let sha256 = format!("{:x}", sha2::Sha256::digest(&bytes));
    Ok((bytes, sha256))
}

/// [`read_hashed`] as UTF-8 text.
pub fn read_text_hashed(path: &Path) -> Result<(String, String), String> {
    let (bytes, sha256) = read_hashed(path)?;
    let text = String::from_utf8(bytes).map_err(|e| {
        format!(
            "not UTF-8 text (byte {}); save it as UTF-8 CSV",
            e.utf8_error().valid_up_to() + 1
        )
    })?;
    Ok((text, sha256))
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Bytes written through [`WriteBehind`] arrive whole and in order while it flushes behind
    /// (common practice, no source: the writer's own contract).
    #[test]
    fn write_behind_keeps_every_byte() {
        let dir = tempfile::tempdir().expect("tempdir");
        let p = dir.path().join("out.bin");
        let want: Vec<u8> = (0..300_000u32).map(|i| (i % 251) as u8).collect();
        let mut w = WriteBehind::new(File::create(&p).expect("create"));
        assert!(w.syncer.is_some(), "a regular file is flushed behind");
        for piece in want.chunks(1000) {
            w.write_all(piece).expect("write");
        }
        drop(w.finish().expect("finish"));
        assert_eq!(std::fs::read(&p).expect("read"), want);
    }

    /// A replaced output keeps the permissions it had (a temporary is created 0600).
    #[test]
    #[cfg(unix)]
    fn a_replaced_output_keeps_its_permissions() {
        use std::os::unix::fs::PermissionsExt;
        let dir = tempfile::tempdir().expect("tempdir");
        let p = dir.path().join("out.csv");
        std::fs::write(&p, "old").expect("write");
        std::fs::set_permissions(&p, std::fs::Permissions::from_mode(0o640)).expect("chmod");
        let mut set = OutputSet::new();
        set.write(&p, b"new").expect("stage");
        set.commit().expect("commit");
        assert_eq!(std::fs::read_to_string(&p).expect("read"), "new");
        let mode = std::fs::metadata(&p).expect("meta").permissions().mode() & 0o777;
        assert_eq!(mode, 0o640, "not the temporary's 0600");
    }

    /// When a rename fails half-way, the outputs renamed before it get their previous contents
    /// back and a new output that had no previous file is removed.
    #[test]
    fn a_failed_commit_puts_every_output_back() {
        let dir = tempfile::tempdir().expect("tempdir");
        let a = dir.path().join("a.csv");
        let b = dir.path().join("b.csv");
        let c = dir.path().join("c.json");
        std::fs::write(&a, "old a").expect("write");
        // c cannot be replaced by a file: it is a folder with something in it
        std::fs::create_dir(&c).expect("mkdir");
        std::fs::write(c.join("x"), "x").expect("write");
        let mut set = OutputSet::new();
        set.write(&a, b"new a").expect("stage a");
        set.write(&b, b"new b").expect("stage b");
        set.write(&c, b"new c").expect("stage c");
        let err = set.commit().expect_err("c cannot be renamed over");
        assert!(err.to_string().contains("c.json"), "{err}");
        assert_eq!(std::fs::read_to_string(&a).expect("a"), "old a");
        assert!(!b.exists(), "b had no previous file");
        let left: Vec<_> = std::fs::read_dir(dir.path())
            .expect("dir")
            .filter_map(|e| e.ok())
            .map(|e| e.file_name().to_string_lossy().to_string())
            .filter(|n| n.starts_with('.'))
            .collect();
        assert!(left.is_empty(), "{left:?}");
    }

    #[test]
    fn a_successful_commit_replaces_every_output_and_keeps_nothing_else() {
        let dir = tempfile::tempdir().expect("tempdir");
        let a = dir.path().join("a.csv");
        std::fs::write(&a, "old a").expect("write");
        let mut set = OutputSet::new();
        set.write(&a, b"new a").expect("stage");
        set.write(&dir.path().join("b.csv"), b"new b").expect("stage");
        set.commit().expect("commit");
        assert_eq!(std::fs::read_to_string(&a).expect("a"), "new a");
        assert_eq!(std::fs::read_dir(dir.path()).expect("dir").count(), 2);
    }

    #[test]
    fn paths_are_compared_as_files() {
        let dir = tempfile::tempdir().expect("tempdir");
        let input = dir.path().join("in.csv");
        std::fs::write(&input, "x").expect("write");
        let other_spelling = dir.path().join(".").join("in.csv");
        assert!(matches!(
            check_paths(&[("logger file", &input)], &[("-o", &other_spelling)]),
            Err(FileError::OutputIsInput { .. })
        ));
        let new = dir.path().join("new.csv");
        let new_again = dir.path().join("sub").join("..").join("new.csv");
        std::fs::create_dir(dir.path().join("sub")).expect("mkdir");
        assert!(matches!(
            check_paths(&[], &[("-o", &new), ("--daily", &new_again)]),
            Err(FileError::SameOutput { .. })
        ));
        assert!(check_paths(&[("logger file", &input)], &[("-o", &new)]).is_ok());
    }
}
