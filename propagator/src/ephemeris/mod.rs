//! Ephemerides (epoch-tagged ECI states) and their files: CSV and CCSDS OEM (KVN).
//!
//! Numbers are written in Rust's shortest round-trip form, so a file written and read
//! back gives the same states bit for bit; epochs are written to the microsecond and
//! round-trip to the microsecond.

pub mod csv;
pub mod oem;
pub mod sp3;

use crate::body::CentralBody;
use crate::config::check_state_plausible;
use crate::state::StateVector;
use crate::time::Epoch;
use std::path::{Path, PathBuf};

/// One epoch-tagged state.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct EphemerisPoint {
    /// The epoch.
    pub epoch: Epoch,
    /// ECI state, km and km/s.
    pub state: StateVector,
}

/// A time-ordered list of states of one object.
#[derive(Clone, Debug, PartialEq, Default)]
pub struct Ephemeris {
    /// Object name (OEM `OBJECT_NAME`).
    pub object_name: String,
    /// Object identifier (OEM `OBJECT_ID`).
    pub object_id: String,
    /// States, strictly increasing in epoch.
    pub points: Vec<EphemerisPoint>,
    /// Index in `points` of the first state of each OEM segment after the first (empty
    /// for one segment). States are never interpolated across a segment boundary.
    pub segment_starts: Vec<usize>,
    /// The frame of the states: GCRF everywhere inside arcwise (readers convert); another
    /// frame only on the way out (an OEM names it in `REF_FRAME`).
    pub frame: crate::frames::Frame,
}

impl Ephemeris {
    /// This GCRF ephemeris with its states in `frame` (ITRF through `earth`, the shipped
    /// IERS table if `None`; velocities included).
    pub fn in_frame(
        &self,
        frame: crate::frames::Frame,
        earth: Option<&crate::earth::EarthOrientation>,
    ) -> Result<Ephemeris, String> {
        if self.frame != crate::frames::Frame::Gcrf {
            return Err(format!(
                "the ephemeris is in {}, not GCRF",
                self.frame.keyword()
            ));
        }
        let rotate = crate::frames::ToGcrf::with_earth(frame, earth)?;
        let points = self
            .points
            .iter()
            .map(|p| EphemerisPoint {
                epoch: p.epoch,
                state: rotate.state_from_gcrf(&p.epoch, &p.state),
            })
            .collect();
        Ok(Ephemeris {
            points,
            frame,
            ..self.clone()
        })
    }

    /// The index ranges of the segments in `points`.
    pub fn segments(&self) -> Vec<std::ops::Range<usize>> {
        let mut bounds = vec![0];
        bounds.extend(self.segment_starts.iter().copied());
        bounds.push(self.points.len());
        bounds
            .windows(2)
            .map(|w| w[0]..w[1])
            .filter(|r| !r.is_empty())
            .collect()
    }
}

/// A file that could not be read or written, with the line where known.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub struct FileError {
    /// The file.
    pub path: PathBuf,
    /// 1-based line, if the problem is on one.
    pub line: Option<usize>,
    /// What is wrong.
    pub message: String,
}

impl std::fmt::Display for FileError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self.line {
            Some(l) => write!(f, "{}:{}: {}", self.path.display(), l, self.message),
            None => write!(f, "{}: {}", self.path.display(), self.message),
        }
    }
}

/// The lines of a CCSDS keyword-value message that carry content: trimmed, with their
/// 1-based numbers, blank lines and `COMMENT` lines left out.
pub(crate) fn kvn_lines(text: &str) -> impl Iterator<Item = (usize, &str)> {
    text.lines()
        .enumerate()
        .map(|(i, raw)| (i + 1, raw.trim()))
        .filter(|(_, l)| !(l.is_empty() || l.starts_with("COMMENT")))
}

/// A [`FileError`] for `path`, at `line` if known.
pub fn file_error_at(path: &Path, line: Option<usize>, message: impl Into<String>) -> FileError {
    file_error(path, line, message)
}

pub(crate) fn file_error(
    path: &Path,
    line: Option<usize>,
    message: impl Into<String>,
) -> FileError {
    FileError {
        path: path.to_path_buf(),
        line,
        message: message.into(),
    }
}

/// File formats, chosen by extension.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Format {
    /// `epoch_utc,x_km,…` comma-separated values.
    Csv,
    /// CCSDS Orbit Ephemeris Message, keyword-value notation.
    Oem,
}

impl Format {
    /// `.csv` → CSV, `.oem` → OEM; anything else is an error naming the file.
    pub fn from_path(path: &Path) -> Result<Format, FileError> {
        match path
            .extension()
            .and_then(|e| e.to_str())
            .map(|e| e.to_ascii_lowercase())
        {
            Some(e) if e == "csv" => Ok(Format::Csv),
            Some(e) if e == "oem" => Ok(Format::Oem),
            _ => Err(file_error(
                path,
                None,
                "unknown ephemeris format: the file name must end in .csv or .oem",
            )),
        }
    }
}

impl Ephemeris {
    /// Reads a CSV or OEM ephemeris (by extension) and checks it: epochs strictly
    /// increasing, every state finite and plausible (outside the Earth, km not metres).
    pub fn load(path: &Path, body: &CentralBody) -> Result<Ephemeris, FileError> {
        Self::load_with(path, body, None)
    }

    /// As [`Ephemeris::load`], ITRF OEM segments through `earth` (the shipped table if
    /// `None`).
    pub fn load_with(
        path: &Path,
        body: &CentralBody,
        earth: Option<&crate::earth::EarthOrientation>,
    ) -> Result<Ephemeris, FileError> {
        let text = crate::input::read_text(path, crate::input::MAX_DATA_BYTES)
            .map_err(|e| file_error(path, None, e))?;
        let (eph, lines) = match Format::from_path(path)? {
            Format::Csv => csv::parse_ephemeris(&text, path)?,
            Format::Oem => oem::parse_with(&text, path, earth)?,
        };
        eph.validate(path, &lines, body)?;
        Ok(eph)
    }

    /// Checks order and plausibility; `lines[i]` is the file line of point `i`.
    pub fn validate(
        &self,
        path: &Path,
        lines: &[usize],
        body: &CentralBody,
    ) -> Result<(), FileError> {
        if self.points.is_empty() {
            return Err(file_error(path, None, "no states in the file"));
        }
        for (i, p) in self.points.iter().enumerate() {
            let line = lines.get(i).copied();
            check_state_plausible(&p.state, body).map_err(|m| file_error(path, line, m))?;
            if i > 0 {
                let prev = &self.points[i - 1];
                let dt = p.epoch.seconds_since(&prev.epoch);
                // A segment after an impulsive maneuver starts at the maneuver's epoch,
                // where the previous one ended (the states before and after the burn).
                if dt == 0.0 && self.segment_starts.contains(&i) {
                    continue;
                }
                if dt == 0.0 {
                    return Err(file_error(
                        path,
                        line,
                        format!(
                            "duplicate epoch {} (also on line {})",
                            p.epoch,
                            lines.get(i - 1).copied().unwrap_or(0)
                        ),
                    ));
                }
                if dt < 0.0 {
                    return Err(file_error(
                        path,
                        line,
                        format!(
                            "epoch {} is earlier than the one before it ({}): epochs must increase",
                            p.epoch, prev.epoch
                        ),
                    ));
                }
            }
        }
        Ok(())
    }

    /// Writes CSV or OEM (by extension), atomically: a temporary file renamed into
    /// place, so a failure never leaves a partial file.
    pub fn save(&self, path: &Path) -> Result<(), FileError> {
        let text = match Format::from_path(path)? {
            Format::Csv => csv::format_ephemeris(self),
            Format::Oem => oem::format(self),
        };
        write_atomically(path, text.as_bytes())
    }
}

/// Writes `bytes` to `path` through a temporary file in the same folder and a rename.
///
/// The temporary file is created exclusively (`O_EXCL`, a random name, mode 0600): a
/// file or symbolic link planted at a predictable name cannot redirect the write. It is
/// removed on every error, and on SIGINT/SIGTERM through [`crate::cleanup`]. The rename
/// replaces `path` itself, never what a link there points to. The result is readable by
/// all (0644), as an ordinary output file.
pub fn write_atomically(path: &Path, bytes: &[u8]) -> Result<(), FileError> {
    use std::io::Write;
    let dir = path
        .parent()
        .filter(|p| !p.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().to_string())
        .unwrap_or_else(|| "out".into());
    std::fs::create_dir_all(dir)
        .map_err(|e| file_error(path, None, format!("cannot create the folder: {e}")))?;
    let cannot = |e: std::io::Error| file_error(path, None, format!("cannot write: {e}"));
    let mut tmp = tempfile::Builder::new()
        .prefix(&format!(".{name}."))
        .suffix(".tmp")
        .tempfile_in(dir)
        .map_err(cannot)?;
    let _registered = crate::cleanup::Registered::new(tmp.path());
    tmp.write_all(bytes).map_err(cannot)?;
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        tmp.as_file()
            .set_permissions(std::fs::Permissions::from_mode(0o644))
            .map_err(cannot)?;
    }
    tmp.persist(path).map_err(|e| cannot(e.error))?;
    Ok(())
}
