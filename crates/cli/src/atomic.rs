//! The only place where the program writes files. Every file is written to
//! a temporary name in its own folder, flushed to disk and renamed over the
//! target, so that a crash, a full disk or a second process never leaves a
//! half-written report, session or history; on failure the temporary file
//! is removed and the old file stays as it was. Input files are never
//! opened for writing (`tests/no_lost_work.rs` checks the sources for any
//! other write).

use std::io::Write;
use std::path::{Path, PathBuf};

fn temporary_beside(path: &Path) -> (PathBuf, PathBuf) {
    let dir = path
        .parent()
        .filter(|d| !d.as_os_str().is_empty())
        .unwrap_or(Path::new("."))
        .to_path_buf();
    let tmp = dir.join(format!(
        ".{}.tmp-{}",
        path.file_name().and_then(|n| n.to_str()).unwrap_or("file"),
        std::process::id()
    ));
    (dir, tmp)
}

/// Let `write` fill a temporary file beside `path`, then rename it to `path`.
pub(crate) fn replace_with(
    path: &Path,
    write: impl FnOnce(&Path) -> std::io::Result<()>,
) -> std::io::Result<()> {
    let (dir, tmp) = temporary_beside(path);
    std::fs::create_dir_all(&dir)?;
    let result = write(&tmp).and_then(|()| std::fs::rename(&tmp, path));
    if result.is_err() {
        let _ = std::fs::remove_file(&tmp);
    }
    result
}

/// Write `contents` to `path` atomically.
pub(crate) fn write_atomic(path: &Path, contents: &str) -> std::io::Result<()> {
    replace_with(path, |tmp| {
        let mut f = std::fs::File::create(tmp)?;
        f.write_all(contents.as_bytes())?;
        f.sync_all()
    })
}
