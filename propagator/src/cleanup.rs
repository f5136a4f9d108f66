//! Files and folders a run is in the middle of writing, removed if the run is stopped by
//! a signal.
//!
//! Temporary files and build folders clean up after themselves on every ordinary exit
//! path (they are removed when dropped); a signal ends the process without running
//! destructors, so each one is also registered here while it lives, and the program's
//! signal handler calls [`remove_all`].

use std::path::{Path, PathBuf};
use std::sync::Mutex;

static PENDING: Mutex<Vec<PathBuf>> = Mutex::new(Vec::new());
static INTERRUPTED: std::sync::atomic::AtomicBool = std::sync::atomic::AtomicBool::new(false);

/// Whether [`remove_all`] has been called (the run was stopped by a signal): a command
/// that fails because its child was stopped should then exit as interrupted.
pub fn interrupted() -> bool {
    INTERRUPTED.load(std::sync::atomic::Ordering::SeqCst)
}
/// Process groups of child processes (a plugin's cargo build) to stop first.
static CHILDREN: Mutex<Vec<u32>> = Mutex::new(Vec::new());

/// Registers a child process, started as the leader of its own process group, for the
/// life of the value: a signal stops its whole group before its files are removed.
pub struct ChildRegistered(u32);

impl ChildRegistered {
    /// Registers the group led by process `pid`.
    pub fn new(pid: u32) -> Self {
        CHILDREN.lock().unwrap_or_else(|p| p.into_inner()).push(pid);
        Self(pid)
    }
}

impl Drop for ChildRegistered {
    fn drop(&mut self) {
        let mut v = CHILDREN.lock().unwrap_or_else(|p| p.into_inner());
        v.retain(|p| *p != self.0);
    }
}

/// Registers a path for the life of the value.
pub struct Registered(PathBuf);

impl Registered {
    /// Registers `path` until the returned value is dropped.
    pub fn new(path: &Path) -> Self {
        PENDING
            .lock()
            .unwrap_or_else(|p| p.into_inner())
            .push(path.to_path_buf());
        Self(path.to_path_buf())
    }
}

impl Drop for Registered {
    fn drop(&mut self) {
        let mut v = PENDING.lock().unwrap_or_else(|p| p.into_inner());
        if let Some(i) = v.iter().rposition(|p| *p == self.0) {
            v.swap_remove(i);
        }
    }
}

/// Removes every registered file or folder (for a signal handler; errors are ignored,
/// as nothing more can be done about them).
pub fn remove_all() {
    INTERRUPTED.store(true, std::sync::atomic::Ordering::SeqCst);
    let children = CHILDREN.lock().unwrap_or_else(|p| p.into_inner()).clone();
    #[cfg(unix)]
    for pid in &children {
        if let Ok(pid) = i32::try_from(*pid) {
            // SAFETY: kill has no memory preconditions; a negative pid names the group.
            unsafe {
                libc::kill(-pid, libc::SIGTERM);
            }
        }
    }
    // Give stopped children a moment, and remove twice: a child may still have been
    // writing when the first pass ran.
    let passes = if children.is_empty() { 1 } else { 2 };
    for _ in 0..passes {
        if !children.is_empty() {
            std::thread::sleep(std::time::Duration::from_millis(250));
        }
        let v = PENDING.lock().unwrap_or_else(|p| p.into_inner());
        for p in v.iter() {
            if p.is_dir() {
                let _ = std::fs::remove_dir_all(p);
            } else {
                let _ = std::fs::remove_file(p);
            }
        }
    }
}

/// The paths registered now (for tests).
pub fn pending() -> Vec<PathBuf> {
    PENDING.lock().unwrap_or_else(|p| p.into_inner()).clone()
}
