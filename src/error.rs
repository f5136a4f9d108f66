//! The CLI's error: a message and the exit code it maps to.

/// Exit code for bad input or usage (DESIGN §3).
pub const EXIT_BAD_INPUT: u8 = 2;
/// Exit code for a check that ran and failed.
pub const EXIT_CHECK_FAILED: u8 = 1;

/// A failure of a command: what to tell the user and the exit code.
#[derive(Debug)]
pub struct CliError {
    /// One clear sentence (or a few), naming the file, line or option.
    pub message: String,
    /// Process exit code.
    pub code: u8,
}

impl CliError {
    /// Bad input or usage: exit code 2.
    pub fn input(message: impl std::fmt::Display) -> Self {
        Self {
            message: message.to_string(),
            code: EXIT_BAD_INPUT,
        }
    }
}
