//! Warnings a run owes its user, collected once per process.
//!
//! Forces are evaluated deep inside integrators, fits and searches, in models built and
//! dropped many times per run, and on several threads. A condition the user must hear
//! about — a learned force used outside its validity window — is recorded here once (by
//! its text) and read back by the command at the end of the run, which prints each
//! warning once on stderr and records all of them in its report.

use std::sync::Mutex;

static NOTICES: Mutex<Vec<String>> = Mutex::new(Vec::new());

/// Records `message` unless the same text was already recorded in this process.
pub fn warn_once(message: String) {
    let mut v = NOTICES.lock().unwrap_or_else(|p| p.into_inner());
    if !v.contains(&message) {
        v.push(message);
    }
}

/// Every warning recorded so far in this process, in the order first recorded.
pub fn all() -> Vec<String> {
    NOTICES.lock().unwrap_or_else(|p| p.into_inner()).clone()
}

#[cfg(test)]
mod tests {
    #[test]
    fn a_warning_is_kept_once() {
        let text = "notice test: the same warning twice".to_string();
        super::warn_once(text.clone());
        super::warn_once(text.clone());
        assert_eq!(super::all().iter().filter(|m| **m == text).count(), 1);
    }
}
