//! Writing files whole or not at all: a temporary file beside the target,
//! synced, then renamed over it. A failed or interrupted run never leaves a
//! half-written output.

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

/// Writes `path` through `body`, atomically.
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
    let dir = path
        .parent()
        .filter(|d| !d.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    let name = path
        .file_name()
        .map_or_else(|| "output".into(), |n| n.to_string_lossy().into_owned());
    let tmp = dir.join(format!(".{name}.{}.tmp", std::process::id()));
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
}
