//! Writing files whole or not at all: a temporary file beside the target,
//! synced, then renamed over it. A failed or interrupted run never leaves a
//! half-written output.
//!
//! What the path names decides how it is written:
//!
//! | the path is | written |
//! |---|---|
//! | absent, or a regular file | atomically: temporary file, sync, rename |
//! | a symbolic link to a regular file | atomically, at the file it points to (the link stays) |
//! | a device, a pipe or a socket (`/dev/null`, `/dev/stdout`, a FIFO) | straight through, in place: such a file is never replaced |
//! | a directory, or a link that points nowhere | refused |
//!
//! [`refuse_same_file`] keeps a command from writing over its own input.
//!
//! A killed writer leaves its temporary file (`.NAME.PID.tmp`) behind; the
//! next atomic write of the same target removes those of processes that are
//! gone ([`remove_stale_temporaries`]), so a re-run after a kill leaves no
//! leftovers.

use std::io::{BufWriter, Write};
use std::path::Path;

/// Errors of an atomic write: the path and what failed.
#[derive(Debug, thiserror::Error)]
pub enum AtomicError<E: std::error::Error + 'static> {
    /// Creating, syncing or renaming the file failed.
    #[error("{path}: {action}: {source}")]
    Io {
        /// The target path.
        path: std::path::PathBuf,
        /// What was being done.
        action: &'static str,
        /// The cause.
        source: std::io::Error,
    },
    /// The body failed; nothing was written.
    #[error(transparent)]
    Body(E),
}

/// Writes `path` through `body`: atomically for a regular file (through
/// a symbolic link to one), straight through for a device, pipe or socket
/// (module docs).
pub fn write_atomically<T, E: std::error::Error + 'static>(
    path: &Path,
    body: impl FnOnce(&mut dyn Write) -> Result<T, E>,
) -> Result<T, AtomicError<E>> {
    let io = |action: &'static str| {
        move |source| AtomicError::Io {
            path: path.to_path_buf(),
            action,
            source,
        }
    };
    let link = std::fs::symlink_metadata(path)
        .ok()
        .is_some_and(|m| m.file_type().is_symlink());
    match std::fs::metadata(path) {
        Ok(m) if m.is_dir() => {
            return Err(io("cannot write: it is a directory; give a file name")(
                std::io::Error::from(std::io::ErrorKind::IsADirectory),
            ))
        }
        Ok(m) if !m.is_file() => {
            // A device, pipe or socket: write in place, never replace it.
            let file = std::fs::OpenOptions::new()
                .write(true)
                .open(path)
                .map_err(io("cannot open"))?;
            let mut w = BufWriter::with_capacity(1 << 16, file);
            let value = body(&mut w).map_err(AtomicError::Body)?;
            w.flush().map_err(io("cannot write"))?;
            return Ok(value);
        }
        Ok(_) if link => {
            // Replace the file the link points to, keep the link.
            let target = std::fs::canonicalize(path).map_err(io("cannot follow the link"))?;
            return write_file_atomically(&target, body).map_err(|e| match e {
                AtomicError::Io { action, source, .. } => AtomicError::Io {
                    path: path.to_path_buf(),
                    action,
                    source,
                },
                other => other,
            });
        }
        Err(e) if link => {
            return Err(io("is a symbolic link to nothing; refusing to replace it")(
                e,
            ))
        }
        _ => {}
    }
    write_file_atomically(path, body)
}

/// The atomic write proper: temporary file beside `path`, sync, rename.
fn write_file_atomically<T, E: std::error::Error + 'static>(
    path: &Path,
    body: impl FnOnce(&mut dyn Write) -> Result<T, E>,
) -> Result<T, AtomicError<E>> {
    let io = |action: &'static str| {
        move |source| AtomicError::Io {
            path: path.to_path_buf(),
            action,
            source,
        }
    };
    let dir = path
        .parent()
        .filter(|d| !d.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    let name = path
        .file_name()
        .map_or_else(|| "output".into(), |n| n.to_string_lossy().into_owned());
    let tmp = dir.join(format!(".{name}.{}.tmp", std::process::id()));
    // Leftovers of killed writers of this same target: best effort, a
    // folder that cannot be listed fails at the create below anyway.
    let _ = remove_stale_temporaries(dir, Some(&name));
    let result = (|| {
        let file = std::fs::File::create(&tmp).map_err(io("cannot create a temporary file"))?;
        let mut w = BufWriter::new(file);
        let value = body(&mut w).map_err(AtomicError::Body)?;
        let file = w
            .into_inner()
            .map_err(|e| io("cannot write")(e.into_error()))?;
        file.sync_all().map_err(io("cannot sync"))?;
        std::fs::rename(&tmp, path).map_err(io("cannot rename into place"))?;
        Ok(value)
    })();
    if result.is_err() {
        let _ = std::fs::remove_file(&tmp);
    }
    result
}

/// Removes the temporary files (`.NAME.PID.tmp`) that writers killed
/// before their rename left in `dir`, of every target or of the target
/// `name` only: those whose process is gone (on systems without `/proc`,
/// those older than an hour). Another running writer's file is kept.
/// Returns how many were removed.
///
/// # Errors
/// The folder cannot be listed.
pub fn remove_stale_temporaries(dir: &Path, name: Option<&str>) -> std::io::Result<usize> {
    let proc_fs = Path::new("/proc/self").exists();
    let mut removed = 0;
    for entry in std::fs::read_dir(dir)? {
        let entry = entry?;
        let file = entry.file_name();
        let Some(file) = file.to_str() else { continue };
        let Some((target, pid)) = file
            .strip_prefix('.')
            .and_then(|n| n.strip_suffix(".tmp"))
            .and_then(|n| n.rsplit_once('.'))
            .and_then(|(target, pid)| Some((target, pid.parse::<u32>().ok()?)))
        else {
            continue;
        };
        if name.is_some_and(|n| n != target) {
            continue;
        }
        let stale = if pid == std::process::id() {
            false
        } else if proc_fs {
            !Path::new("/proc").join(pid.to_string()).exists()
        } else {
            entry
                .metadata()
                .and_then(|m| m.modified())
                .ok()
                .and_then(|t| t.elapsed().ok())
                .is_some_and(|age| age > std::time::Duration::from_secs(3600))
        };
        if stale && std::fs::remove_file(entry.path()).is_ok() {
            removed += 1;
        }
    }
    Ok(removed)
}

/// The output would overwrite the input.
#[derive(Debug, thiserror::Error)]
#[error("{output}: this is the input file {input}; writing it would destroy the input: choose another output")]
pub struct SameFileError {
    /// The input path.
    pub input: std::path::PathBuf,
    /// The output path.
    pub output: std::path::PathBuf,
}

/// Refuses an output that is the input file itself: the same path, a
/// link to it, a hard link or another name of it. `-` (standard input or
/// output) and paths that do not exist yet pass.
pub fn refuse_same_file(input: &Path, output: &Path) -> Result<(), SameFileError> {
    if input.as_os_str() == "-" || output.as_os_str() == "-" {
        return Ok(());
    }
    let (Ok(a), Ok(b)) = (std::fs::metadata(input), std::fs::metadata(output)) else {
        return Ok(());
    };
    if !a.is_file() || !b.is_file() {
        // Devices and pipes may be named twice legitimately (/dev/stdin
        // and /dev/stdout are different streams of one terminal).
        return Ok(());
    }
    if same_file(&a, &b) {
        return Err(SameFileError {
            input: input.to_path_buf(),
            output: output.to_path_buf(),
        });
    }
    Ok(())
}

#[cfg(unix)]
fn same_file(a: &std::fs::Metadata, b: &std::fs::Metadata) -> bool {
    use std::os::unix::fs::MetadataExt;
    (a.dev(), a.ino()) == (b.dev(), b.ino())
}

#[cfg(not(unix))]
fn same_file(a: &std::fs::Metadata, b: &std::fs::Metadata) -> bool {
    // Without inode numbers: size and modification time, a cautious guess
    // that can only refuse too much.
    a.len() == b.len() && a.modified().ok() == b.modified().ok()
}

/// Writes bytes to `path` atomically.
pub fn write_bytes(path: &Path, bytes: &[u8]) -> Result<(), AtomicError<std::io::Error>> {
    write_atomically(path, |w| w.write_all(bytes))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn whole_or_nothing() {
        let dir = std::env::temp_dir().join(format!("lc-atomic-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        let target = dir.join("out.bin");
        write_bytes(&target, b"first").unwrap();
        // A failing body leaves the old file and no temporary.
        let r: Result<(), _> = write_atomically(&target, |w| {
            w.write_all(b"half")?;
            Err(std::io::Error::other("boom"))
        });
        assert!(r.is_err());
        assert_eq!(std::fs::read(&target).unwrap(), b"first");
        assert_eq!(std::fs::read_dir(&dir).unwrap().count(), 1);
        std::fs::remove_dir_all(&dir).ok();
    }

    /// Issue 14, defect 9: a killed `convert` left its partial temporary
    /// CSV beside the output for good. The next write of the same output
    /// removes a dead writer's leftover; a live writer's (this process's
    /// parent) and another target's stay.
    #[test]
    fn a_dead_writers_leftover_goes_with_the_next_write() {
        let dir = scratch("leftover");
        // A process id that is not running: past the kernel's pid range.
        let dead = u32::MAX - 7;
        let live = std::os::unix::process::parent_id();
        let leftover = dir.join(format!(".out.csv.{dead}.tmp"));
        let running = dir.join(format!(".out.csv.{live}.tmp"));
        let other = dir.join(format!(".other.csv.{dead}.tmp"));
        for f in [&leftover, &running, &other] {
            std::fs::write(f, b"partial").unwrap();
        }
        write_bytes(&dir.join("out.csv"), b"whole").unwrap();
        assert!(!leftover.exists(), "a dead writer's temporary was left");
        assert!(running.exists() && other.exists());
        assert_eq!(std::fs::read(dir.join("out.csv")).unwrap(), b"whole");
        assert_eq!(remove_stale_temporaries(&dir, None).unwrap(), 1);
        assert!(!other.exists() && running.exists());
        std::fs::remove_dir_all(&dir).ok();
    }

    fn scratch(name: &str) -> std::path::PathBuf {
        let dir = std::env::temp_dir().join(format!("lc-atomic-{name}-{}", std::process::id()));
        std::fs::remove_dir_all(&dir).ok();
        std::fs::create_dir_all(&dir).unwrap();
        dir
    }

    /// Issue 19, item 7: `-o /dev/null` replaced the device with a file.
    #[cfg(unix)]
    #[test]
    fn devices_are_written_in_place_never_replaced() {
        use std::os::unix::fs::FileTypeExt;
        write_bytes(Path::new("/dev/null"), b"nothing").unwrap();
        let m = std::fs::symlink_metadata("/dev/null").unwrap();
        assert!(m.file_type().is_char_device());
    }

    #[cfg(unix)]
    #[test]
    fn pipes_are_written_straight_through() {
        use std::os::unix::fs::FileTypeExt;
        let dir = scratch("fifo");
        let fifo = dir.join("pipe");
        let made = std::process::Command::new("mkfifo").arg(&fifo).status();
        if !made.is_ok_and(|s| s.success()) {
            eprintln!("mkfifo unavailable: skipped");
            return;
        }
        let reader = {
            let fifo = fifo.clone();
            std::thread::spawn(move || std::fs::read(fifo).unwrap())
        };
        write_bytes(&fifo, b"through the pipe").unwrap();
        assert_eq!(reader.join().unwrap(), b"through the pipe");
        assert!(std::fs::symlink_metadata(&fifo)
            .unwrap()
            .file_type()
            .is_fifo());
        std::fs::remove_dir_all(&dir).ok();
    }

    #[cfg(unix)]
    #[test]
    fn links_are_followed_to_a_regular_file_and_kept() {
        let dir = scratch("link");
        let target = dir.join("real.csv");
        let link = dir.join("link.csv");
        std::fs::write(&target, b"old").unwrap();
        std::os::unix::fs::symlink(&target, &link).unwrap();
        write_bytes(&link, b"new").unwrap();
        assert!(std::fs::symlink_metadata(&link)
            .unwrap()
            .file_type()
            .is_symlink());
        assert_eq!(std::fs::read(&target).unwrap(), b"new");
        // A link to nothing is refused, and stays as it was.
        let dangling = dir.join("dangling.csv");
        std::os::unix::fs::symlink(dir.join("missing.csv"), &dangling).unwrap();
        let e = write_bytes(&dangling, b"x").unwrap_err().to_string();
        assert!(e.contains("symbolic link to nothing"), "{e}");
        assert!(!dir.join("missing.csv").exists());
        // A directory is refused.
        let e = write_bytes(&dir, b"x").unwrap_err().to_string();
        assert!(e.contains("directory"), "{e}");
        std::fs::remove_dir_all(&dir).ok();
    }

    /// Issue 19, item 7: the same file as input and output destroyed the log.
    #[test]
    fn the_input_is_never_the_output() {
        let dir = scratch("same");
        let log = dir.join("log.csv");
        std::fs::write(&log, b"cycles,ticks\n").unwrap();
        assert!(refuse_same_file(&log, &log).is_err());
        let e = refuse_same_file(&log, &dir.join(".").join("log.csv")).unwrap_err();
        assert!(e.to_string().contains("choose another output"), "{e}");
        #[cfg(unix)]
        {
            let link = dir.join("link.csv");
            std::os::unix::fs::symlink(&log, &link).unwrap();
            assert!(refuse_same_file(&log, &link).is_err());
            let hard = dir.join("hard.csv");
            std::fs::hard_link(&log, &hard).unwrap();
            assert!(refuse_same_file(&hard, &log).is_err());
        }
        assert!(refuse_same_file(&log, &dir.join("out.csv")).is_ok());
        assert!(refuse_same_file(Path::new("-"), Path::new("-")).is_ok());
        std::fs::remove_dir_all(&dir).ok();
    }
}
