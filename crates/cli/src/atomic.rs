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

/// Whether `name` is a file the program writes into a report folder (the
/// report, its data, its plots, and the temporary names of its writes).
pub(crate) fn is_report_file(name: &str) -> bool {
    const PLOTS: [&str; 6] = [
        "items_",
        "contributions_",
        "conformity_",
        "monte_carlo_",
        "fit_",
        "residuals_",
    ];
    matches!(
        name,
        "report.html" | "report.md" | "budget.csv" | "results.csv" | "result.json" | "items.csv"
    ) || (name.ends_with(".svg") && PLOTS.iter().any(|p| name.starts_with(p)))
        || (name.starts_with("fit_data_") && name.ends_with(".csv"))
        || (name.starts_with('.') && name.contains(".tmp-"))
}

fn process_alive(pid: u32) -> bool {
    pid == std::process::id() || Path::new(&format!("/proc/{pid}")).exists()
}

/// Remove the temporary folders of earlier runs that were killed before
/// they finished: named as this program names them, their process gone,
/// and holding report files only.
fn clean_stale(parent: &Path, stem: &str) {
    let Ok(entries) = std::fs::read_dir(parent) else {
        return;
    };
    for e in entries.flatten() {
        let name = e.file_name().to_string_lossy().into_owned();
        let Some(rest) = name.strip_prefix(&format!(".{stem}.incertus-")) else {
            continue;
        };
        let pid = rest.rsplit('-').next().and_then(|p| p.parse::<u32>().ok());
        let ours = std::fs::read_dir(e.path()).is_ok_and(|d| {
            d.flatten()
                .all(|f| is_report_file(&f.file_name().to_string_lossy()))
        });
        if pid.is_some_and(|p| !process_alive(p)) && ours {
            let _ = std::fs::remove_dir_all(e.path());
        }
    }
}

/// Write a whole folder as one unit: the files are written and synced
/// under a temporary name beside `dir`, which then takes `dir`'s place by
/// rename; an existing `dir` (checked beforehand to hold report files only)
/// is moved aside first and removed after. A crash, a full disk or a second
/// run at the same time never leaves a folder mixing two evaluations or
/// holding files of an earlier one.
pub(crate) fn write_folder(dir: &Path, files: &[(String, String)]) -> std::io::Result<()> {
    let parent = dir
        .parent()
        .filter(|d| !d.as_os_str().is_empty())
        .unwrap_or(Path::new("."))
        .to_path_buf();
    let stem = dir
        .file_name()
        .and_then(|n| n.to_str())
        .unwrap_or("report")
        .to_string();
    std::fs::create_dir_all(&parent)?;
    clean_stale(&parent, &stem);
    let pid = std::process::id();
    let tmp = parent.join(format!(".{stem}.incertus-new-{pid}"));
    let old = parent.join(format!(".{stem}.incertus-old-{pid}"));
    let _ = std::fs::remove_dir_all(&tmp);
    std::fs::create_dir(&tmp)?;
    let written = files.iter().try_for_each(|(name, contents)| {
        let mut f = std::fs::File::create(tmp.join(name))?;
        f.write_all(contents.as_bytes())?;
        f.sync_all()
    });
    if let Err(e) = written {
        let _ = std::fs::remove_dir_all(&tmp);
        return Err(e);
    }
    let moved_aside = dir.exists();
    if moved_aside {
        if let Err(e) = std::fs::rename(dir, &old) {
            let _ = std::fs::remove_dir_all(&tmp);
            return Err(e);
        }
    }
    if let Err(e) = std::fs::rename(&tmp, dir) {
        if moved_aside {
            let _ = std::fs::rename(&old, dir);
        }
        let _ = std::fs::remove_dir_all(&tmp);
        return Err(e);
    }
    if moved_aside {
        let _ = std::fs::remove_dir_all(&old);
    }
    Ok(())
}

/// Remove a file the program wrote itself (an old recovery state).
pub(crate) fn remove_own_file(path: &Path) {
    let _ = std::fs::remove_file(path);
}
