//! SP3-c and SP3-d precise orbits (an open IGS standard): positions in km in an
//! Earth-fixed frame (the header's coordinate system, an ITRF realization such as IGb14),
//! every satellite at each epoch.
//!
//! Read: the version line (`#c`/`#d`, the coordinate-system label), the time system of the
//! first `%c` line (GPS, TAI or UTC; GAL is GPS time; others are refused with the word
//! named), epoch lines (`*  YYYY MM DD hh mm ss.ssssssss`) and position lines
//! (`P<id> x y z clock`). A position of exactly 0 (or a line with too few fields) marks an
//! absent value and is skipped; velocity (`V`) and correlation (`E`P/`E`V) lines are
//! ignored. The header's epoch count is not checked: slices of longer files are common.

use super::{file_error_at, FileError};
use crate::time::{Epoch, Scale};
use nalgebra::Vector3;
use std::path::Path;

/// One satellite position.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Sp3Position {
    /// When (the file's time system converted).
    pub epoch: Epoch,
    /// Earth-fixed position, km.
    pub r_km: Vector3<f64>,
    /// 1-based line in the file.
    pub line: usize,
}

/// A parsed SP3 file.
#[derive(Clone, Debug, PartialEq)]
pub struct Sp3 {
    /// `c` or `d`.
    pub version: char,
    /// The coordinate-system label of the header (e.g. `IGb14`).
    pub frame: String,
    /// The time system of the header (`GPS`, `TAI`, `UTC`, `GAL`).
    pub time_system: String,
    /// Every position line, in file order: (satellite id, position).
    pub positions: Vec<(String, Sp3Position)>,
}

impl Sp3 {
    /// Reads an SP3-c/d file.
    pub fn load(path: &Path) -> Result<Sp3, FileError> {
        let text = crate::input::read_text(path, crate::input::MAX_DATA_BYTES)
            .map_err(|e| file_error_at(path, None, e))?;
        Self::parse(&text, path)
    }

    /// Parses SP3 text; `path` names the file in errors.
    pub fn parse(text: &str, path: &Path) -> Result<Sp3, FileError> {
        let err = |line: usize, m: String| file_error_at(path, Some(line), m);
        let mut lines = text.lines().enumerate().map(|(i, l)| (i + 1, l));
        let (_, first) = lines
            .next()
            .ok_or_else(|| file_error_at(path, None, "empty file"))?;
        let version = match first.get(..2) {
            Some("#c") => 'c',
            Some("#d") => 'd',
            _ => {
                return Err(err(
                    1,
                    "not an SP3 file: the first line must start with #c or #d (SP3-c or SP3-d)"
                        .into(),
                ))
            }
        };
        let frame = first.get(46..51).unwrap_or("").trim().to_string();
        let mut time_system: Option<String> = None;
        let mut scale = None;
        let mut epoch: Option<Epoch> = None;
        let mut positions = Vec::new();
        for (n, line) in lines {
            if line.starts_with("%c") && time_system.is_none() {
                let ts = line.get(9..12).unwrap_or("").trim().to_string();
                scale = Some(match ts.as_str() {
                    "GPS" | "GAL" => Scale::Gps,
                    "TAI" => Scale::Tai,
                    "UTC" => Scale::Utc,
                    other => {
                        return Err(err(
                            n,
                            format!(
                                "time system `{}` is not supported (GPS, GAL, TAI or UTC)",
                                crate::text::sanitized(other)
                            ),
                        ))
                    }
                });
                time_system = Some(ts);
            } else if let Some(rest) = line.strip_prefix('*') {
                let s = scale
                    .ok_or_else(|| err(n, "an epoch line before the %c time-system line".into()))?;
                let e = epoch_of(rest).map_err(|m| err(n, m))?;
                let e = Epoch::parse_iso(&e, s).map_err(|m| err(n, m.to_string()))?;
                if let Some(prev) = epoch {
                    if e.seconds_since(&prev) <= 0.0 {
                        return Err(err(n, "epochs must increase".into()));
                    }
                }
                epoch = Some(e);
            } else if line.starts_with('P') && line.len() > 4 {
                let Some(e) = epoch else {
                    return Err(err(n, "a position line before the first epoch line".into()));
                };
                let (Some(id), Some(rest)) = (line.get(1..4), line.get(4..)) else {
                    return Err(err(
                        n,
                        "a position line with non-ASCII text in its satellite id".into(),
                    ));
                };
                let id = crate::text::sanitized(id.trim());
                let f: Vec<&str> = rest.split_whitespace().collect();
                if f.len() < 3 {
                    continue;
                }
                let mut r = [0.0; 3];
                for (k, v) in f[..3].iter().enumerate() {
                    r[k] = v
                        .parse::<f64>()
                        .ok()
                        .filter(|x| x.is_finite())
                        .ok_or_else(|| {
                            err(
                                n,
                                format!(
                                    "{id}: `{}` is not a finite number",
                                    crate::text::sanitized(v)
                                ),
                            )
                        })?;
                }
                if r.iter().all(|&x| x == 0.0) {
                    continue;
                }
                positions.push((
                    id,
                    Sp3Position {
                        epoch: e,
                        r_km: Vector3::from(r),
                        line: n,
                    },
                ));
            } else if line.starts_with("EOF") {
                break;
            }
        }
        let time_system = time_system
            .ok_or_else(|| file_error_at(path, None, "no %c line with the time system"))?;
        Ok(Sp3 {
            version,
            frame,
            time_system,
            positions,
        })
    }

    /// The satellites present, in order of first appearance.
    pub fn satellites(&self) -> Vec<&str> {
        let mut ids: Vec<&str> = Vec::new();
        for (id, _) in &self.positions {
            if !ids.contains(&id.as_str()) {
                ids.push(id);
            }
        }
        ids
    }

    /// The positions of satellite `id`, or an error naming the ones present.
    pub fn of(&self, id: &str, path: &Path) -> Result<Vec<Sp3Position>, FileError> {
        let v: Vec<Sp3Position> = self
            .positions
            .iter()
            .filter(|(s, _)| s == id)
            .map(|(_, p)| *p)
            .collect();
        if v.is_empty() {
            let ids = self.satellites();
            let shown: Vec<&str> = ids.iter().take(12).copied().collect();
            return Err(file_error_at(
                path,
                None,
                format!(
                    "no satellite `{}` in the file ({} present: {}{})",
                    crate::text::sanitized(id),
                    ids.len(),
                    shown.join(" "),
                    if ids.len() > 12 { " …" } else { "" }
                ),
            ));
        }
        Ok(v)
    }
}

/// `  YYYY MM DD hh mm ss.ssssssss` → ISO text.
fn epoch_of(rest: &str) -> Result<String, String> {
    let f: Vec<&str> = rest.split_whitespace().collect();
    if f.len() != 6 {
        return Err(format!(
            "epoch line: {} fields, 6 expected (YYYY MM DD hh mm ss)",
            f.len()
        ));
    }
    let int = |s: &str, w: &str| {
        s.parse::<u32>().map_err(|_| {
            format!(
                "epoch line: {w} `{}` is not a whole number",
                crate::text::sanitized(s)
            )
        })
    };
    let (y, mo, d, h, mi) = (
        int(f[0], "year")?,
        int(f[1], "month")?,
        int(f[2], "day")?,
        int(f[3], "hour")?,
        int(f[4], "minute")?,
    );
    let sec: f64 = f[5]
        .parse()
        .ok()
        .filter(|s: &f64| s.is_finite() && (0.0..61.0).contains(s))
        .ok_or_else(|| {
            format!(
                "epoch line: seconds `{}` out of range",
                crate::text::sanitized(f[5])
            )
        })?;
    Ok(format!("{y:04}-{mo:02}-{d:02}T{h:02}:{mi:02}:{sec:012.9}"))
}

#[cfg(test)]
mod tests {
    use super::*;

    const HEAD: &str = "#dP2021  4 28  0  0  0.00000000     289 d+D   IGb14 FIT AIUB\n## 2155 259200.00000000   300.00000000 59332 0.0000000000000\n%c M  cc GPS ccc cccc cccc cccc cccc ccccc ccccc ccccc ccccc\n";

    #[test]
    fn gps_time_is_19_s_behind_tai_and_absent_positions_are_skipped() {
        let text = format!("{HEAD}*  2021  4 28 18  0  0.00000000\nPG01  13287.682546 -15491.926575  16545.690647    703.963460\nPG02      0.000000      0.000000      0.000000 999999.999999\nEOF\n");
        let s = Sp3::parse(&text, Path::new("o.sp3")).unwrap();
        assert_eq!(s.frame, "IGb14");
        assert_eq!(s.satellites(), vec!["G01"]);
        let p = s.of("G01", Path::new("o.sp3")).unwrap()[0];
        // GPS = TAI − 19 s (IS-GPS-200; common knowledge); 2021: TAI − UTC = 37 s, so
        // 18:00:00 GPS is 17:59:42 UTC.
        assert_eq!(p.epoch, Epoch::parse_utc("2021-04-28T17:59:42Z").unwrap());
        assert_eq!(p.line, 5);
        let e = s.of("G07", Path::new("o.sp3")).unwrap_err().to_string();
        assert!(
            e.contains("o.sp3") && e.contains("G07") && e.contains("G01"),
            "{e}"
        );
    }

    #[test]
    fn a_bad_time_system_and_unsorted_epochs_are_refused_with_the_line() {
        let glo = HEAD.replace("cc GPS", "cc GLO");
        let e = Sp3::parse(&glo, Path::new("o.sp3"))
            .unwrap_err()
            .to_string();
        assert!(e.contains("o.sp3:3") && e.contains("GLO"), "{e}");
        let back =
            format!("{HEAD}*  2021  4 28 18  5  0.00000000\n*  2021  4 28 18  0  0.00000000\n");
        let e = Sp3::parse(&back, Path::new("o.sp3"))
            .unwrap_err()
            .to_string();
        assert!(e.contains("o.sp3:5") && e.contains("increase"), "{e}");
    }
}
