//! The shell's recovery state: one file per session in
//! `$INCERTUS_HOME/recovery/` (`session-SECONDS-PID.toml`), written after
//! every statement that changed the definitions (at most twice a second
//! for a piped script, at once at a prompt), at the end, and on SIGHUP or
//! SIGTERM before the process ends. Parallel shells and piped scripts
//! therefore never overwrite another session's state, and closing the
//! terminal loses nothing; `recover` loads the newest state of another
//! session. Files are written atomically (`crate::atomic`).

use std::path::{Path, PathBuf};
use std::sync::{Arc, Mutex};
use std::time::{Duration, Instant};

use crate::atomic::{remove_own_file, write_atomic};

/// Sessions kept; older recovery files are removed.
const KEEP: usize = 20;

pub(super) struct Recovery {
    dir: PathBuf,
    own: PathBuf,
    /// The latest state not yet on disk, shared with the signal watcher.
    pending: Arc<Mutex<Option<String>>>,
    last_write: Option<Instant>,
    interactive: bool,
}

/// Where the recovery files and the history live.
pub(super) fn home() -> PathBuf {
    if let Some(h) = std::env::var_os("INCERTUS_HOME") {
        return PathBuf::from(h);
    }
    std::env::var_os("HOME")
        .map(|h| PathBuf::from(h).join(".incertus"))
        .unwrap_or_else(|| PathBuf::from(".incertus"))
}

/// The recovery files of every session (and the single file of earlier
/// versions), newest first.
pub(super) fn saved_states() -> Vec<PathBuf> {
    let mut found: Vec<(std::time::SystemTime, PathBuf)> = Vec::new();
    let mut add = |p: PathBuf| {
        if let Ok(t) = std::fs::metadata(&p).and_then(|m| m.modified()) {
            found.push((t, p));
        }
    };
    if let Ok(d) = std::fs::read_dir(home().join("recovery")) {
        for e in d.flatten() {
            let name = e.file_name().to_string_lossy().into_owned();
            if name.starts_with("session-") && name.ends_with(".toml") {
                add(e.path());
            }
        }
    }
    add(home().join("recovery.toml"));
    found.sort_by(|a, b| b.0.cmp(&a.0).then(b.1.cmp(&a.1)));
    found.into_iter().map(|(_, p)| p).collect()
}

impl Recovery {
    pub(super) fn new(interactive: bool) -> Self {
        let dir = home().join("recovery");
        let secs = std::time::SystemTime::now()
            .duration_since(std::time::UNIX_EPOCH)
            .map_or(0, |d| d.as_secs());
        let own = dir.join(format!("session-{secs}-{}.toml", std::process::id()));
        Recovery {
            dir,
            own,
            pending: Arc::new(Mutex::new(None)),
            last_write: None,
            interactive,
        }
    }

    /// The newest state kept by another session.
    pub(super) fn newest_other(&self) -> Option<PathBuf> {
        saved_states().into_iter().find(|p| p != &self.own)
    }

    /// On SIGHUP or SIGTERM (a closed terminal, a stopped job), write the
    /// latest state, then end as the signal would.
    pub(super) fn watch_signals(&self) {
        use signal_hook::consts::{SIGHUP, SIGTERM};
        let Ok(mut signals) = signal_hook::iterator::Signals::new([SIGHUP, SIGTERM]) else {
            return;
        };
        let pending = Arc::clone(&self.pending);
        let own = self.own.clone();
        std::thread::spawn(move || {
            if let Some(sig) = signals.forever().next() {
                let text = pending.lock().map(|mut p| p.take()).unwrap_or(None);
                if let Some(text) = text {
                    let _ = write_atomic(&own, &text);
                }
                std::process::exit(128 + sig);
            }
        });
    }

    /// The definitions changed: keep `text` (written now at a prompt, at
    /// most twice a second in a script).
    pub(super) fn changed(&mut self, text: String) {
        if let Ok(mut p) = self.pending.lock() {
            *p = Some(text);
        }
        let due = self
            .last_write
            .is_none_or(|t| t.elapsed() >= Duration::from_millis(500));
        if self.interactive || due {
            let _ = self.flush();
        }
    }

    /// Write the pending state, if any.
    pub(super) fn flush(&mut self) -> std::io::Result<()> {
        let text = self.pending.lock().map(|mut p| p.take()).unwrap_or(None);
        let Some(text) = text else {
            return Ok(());
        };
        self.last_write = Some(Instant::now());
        std::fs::create_dir_all(&self.dir)?;
        let r = write_atomic(&self.own, &text);
        self.prune();
        r
    }

    /// This session's file.
    pub(super) fn path(&self) -> &Path {
        &self.own
    }

    /// Keep the newest [`KEEP`] sessions' files.
    fn prune(&self) {
        let states: Vec<PathBuf> = saved_states()
            .into_iter()
            .filter(|p| p.parent() == Some(self.dir.as_path()))
            .collect();
        for old in states.iter().skip(KEEP) {
            remove_own_file(old);
        }
    }
}
