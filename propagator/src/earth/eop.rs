//! Earth-orientation parameters (EOP): UT1 − UTC, polar motion (xp, yp) and the celestial
//! pole offsets (dX, dY) from IERS daily series, interpolated linearly in time.
//!
//! Three layouts are read, each detected from the file's first lines (one table,
//! [`FORMATS`], so a new layout is one entry):
//! - IERS `finals2000A` (Bulletin A columns; IERS Rapid Service/Prediction Center, the
//!   file's ReadMe gives the byte ranges used here);
//! - IERS EOP 20 C04 (`eopc04.1962-now`, whitespace columns after `#` comment lines);
//! - arcwise's own compact CSV (the shipped default, written by
//!   `tools/reference/eop_table.py`).
//!
//! UT1 − UTC jumps by one second at each leap second, so the table keeps UT1 − TAI, which
//! is smooth, and interpolates that. Nodes are 0h UTC of each day, placed on the TT axis.

use crate::time::{tai_minus_utc_on_mjd, tt_seconds_of_mjd_utc, TT_MINUS_TAI_S};
use std::path::Path;
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::Arc;

/// Arcseconds to radians.
pub const ARCSEC: f64 = std::f64::consts::PI / (180.0 * 3600.0);

/// One day of Earth-orientation data as the IERS files give it.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct EopRow {
    /// Modified Julian Date of 0h UTC of the day.
    pub mjd_utc: i64,
    /// Polar motion x, arcsec.
    pub xp_arcsec: f64,
    /// Polar motion y, arcsec.
    pub yp_arcsec: f64,
    /// UT1 − UTC, s.
    pub ut1_minus_utc_s: f64,
    /// Celestial pole offset dX with respect to IAU 2006/2000A, milliarcsec.
    pub dx_mas: f64,
    /// Celestial pole offset dY, milliarcsec.
    pub dy_mas: f64,
    /// A prediction, not a measured value.
    pub predicted: bool,
}

/// Interpolated orientation values at one instant.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct EopValues {
    /// UT1 − TT, s (what the Earth rotation angle needs with TT in hand).
    pub ut1_minus_tt_s: f64,
    /// Polar motion x, rad.
    pub xp_rad: f64,
    /// Polar motion y, rad.
    pub yp_rad: f64,
    /// Celestial pole offset dX, rad.
    pub dx_rad: f64,
    /// Celestial pole offset dY, rad.
    pub dy_rad: f64,
}

/// A daily EOP series, ready to interpolate.
#[derive(Debug)]
pub struct EopTable {
    source: String,
    first_mjd: i64,
    /// Node times, TT seconds since J2000.0 (0h UTC of each day).
    nodes_tt_s: Vec<f64>,
    /// [UT1 − TAI s, xp rad, yp rad, dX rad, dY rad] at each node.
    values: Vec<[f64; 5]>,
    /// The first predicted day, if any.
    first_predicted_mjd: Option<i64>,
    /// Set once an epoch outside the table has been asked for (warned once).
    outside_seen: AtomicBool,
}

/// A file layout the reader knows.
pub struct Format {
    /// Name in messages.
    pub name: &'static str,
    /// Whether the file's opening lines are this layout's.
    pub detect: fn(&[&str]) -> bool,
    /// One line → a row (`Ok(None)` for comments and lines with no data).
    pub parse: fn(&str) -> Result<Option<EopRow>, String>,
}

/// The layouts, tried in order.
pub const FORMATS: &[Format] = &[
    Format {
        name: "arcwise compact EOP CSV",
        detect: |head| head.first().is_some_and(|l| l.starts_with(COMPACT_MAGIC)),
        parse: parse_compact,
    },
    Format {
        name: "IERS EOP 20 C04",
        detect: |head| {
            head.iter()
                .take(10)
                .any(|l| l.starts_with('#') && l.contains("C04"))
        },
        parse: parse_c04,
    },
    Format {
        name: "IERS finals2000A",
        detect: |head| {
            head.first().is_some_and(|l| {
                l.len() >= 78
                    && l.get(7..15)
                        .is_some_and(|m| m.trim().parse::<f64>().is_ok())
            })
        },
        parse: parse_finals,
    },
];

/// First line of the compact CSV.
pub const COMPACT_MAGIC: &str = "# arcwise Earth-orientation table";

/// The shipped default: IERS finals2000A from 1990 (see the file's header for the source).
const DEFAULT_TABLE: &str = include_str!("../../data/eop_finals2000a_compact.csv");

impl EopTable {
    /// The shipped default table (parsed once per process; its tests parse it too, so an
    /// error here means a damaged build).
    pub fn shipped() -> Result<Arc<EopTable>, String> {
        static TABLE: std::sync::OnceLock<Result<Arc<EopTable>, String>> =
            std::sync::OnceLock::new();
        TABLE
            .get_or_init(|| EopTable::parse(DEFAULT_TABLE, "the shipped EOP table").map(Arc::new))
            .clone()
    }

    /// Reads an IERS `finals2000A`, EOP 20 C04 or compact file; errors name the file and line.
    pub fn read(path: &Path) -> Result<EopTable, String> {
        let text = crate::input::read_text(path, crate::input::MAX_DATA_BYTES)
            .map_err(|e| e.to_string())?;
        EopTable::parse(&text, &path.display().to_string())
    }

    /// Parses `text` (from `origin`, for messages) in whichever layout it is.
    pub fn parse(text: &str, origin: &str) -> Result<EopTable, String> {
        let head: Vec<&str> = text.lines().take(12).collect();
        let format = FORMATS.iter().find(|f| (f.detect)(&head)).ok_or_else(|| {
            format!(
                "{origin}: not an Earth-orientation file arcwise reads (IERS finals2000A, IERS EOP 20 C04, or the compact CSV)"
            )
        })?;
        let mut rows: Vec<EopRow> = Vec::new();
        for (i, line) in text.lines().enumerate() {
            let at = || format!("{origin}:{} ({})", i + 1, format.name);
            let Some(row) = (format.parse)(line).map_err(|e| format!("{}: {e}", at()))? else {
                continue;
            };
            check_row(&row).map_err(|e| format!("{}: {e}", at()))?;
            if let Some(prev) = rows.last() {
                if row.mjd_utc <= prev.mjd_utc {
                    return Err(format!(
                        "{}: MJD {} does not follow {} (dates must increase)",
                        at(),
                        row.mjd_utc,
                        prev.mjd_utc
                    ));
                }
                if row.mjd_utc != prev.mjd_utc + 1 {
                    return Err(format!(
                        "{}: gap from MJD {} to {} (a daily series is expected)",
                        at(),
                        prev.mjd_utc,
                        row.mjd_utc
                    ));
                }
            }
            rows.push(row);
        }
        if rows.len() < 2 {
            return Err(format!("{origin}: fewer than two days of data"));
        }
        Ok(EopTable::from_rows(
            &rows,
            format!("{origin} ({})", format.name),
        ))
    }

    /// A table from daily rows (consecutive days, checked by the caller).
    fn from_rows(rows: &[EopRow], source: String) -> EopTable {
        let nodes_tt_s = rows
            .iter()
            .map(|r| tt_seconds_of_mjd_utc(r.mjd_utc))
            .collect();
        let values = rows
            .iter()
            .map(|r| {
                [
                    r.ut1_minus_utc_s - tai_minus_utc_on_mjd(r.mjd_utc),
                    r.xp_arcsec * ARCSEC,
                    r.yp_arcsec * ARCSEC,
                    r.dx_mas * 1e-3 * ARCSEC,
                    r.dy_mas * 1e-3 * ARCSEC,
                ]
            })
            .collect();
        EopTable {
            source,
            first_mjd: rows[0].mjd_utc,
            nodes_tt_s,
            values,
            first_predicted_mjd: rows.iter().find(|r| r.predicted).map(|r| r.mjd_utc),
            outside_seen: AtomicBool::new(false),
        }
    }

    /// Where the table came from.
    pub fn source(&self) -> &str {
        &self.source
    }

    /// The days covered, MJD (first, last).
    pub fn span_mjd(&self) -> (i64, i64) {
        (
            self.first_mjd,
            self.first_mjd + self.values.len() as i64 - 1,
        )
    }

    /// The first day whose values are predictions, if any.
    pub fn first_predicted_mjd(&self) -> Option<i64> {
        self.first_predicted_mjd
    }

    /// Values at `tt_s` (TT seconds since J2000.0), linear between days. Outside the table
    /// the nearest end's values are used, and a warning is recorded once per table (every
    /// report that used them carries it).
    pub fn at(&self, tt_s: f64) -> EopValues {
        let n = self.nodes_tt_s.len();
        let (first, last) = (self.nodes_tt_s[0], self.nodes_tt_s[n - 1]);
        let v = if !(tt_s > first && tt_s < last) {
            // An end node itself, outside, or NaN: the end's values.
            if !(first..=last).contains(&tt_s) {
                self.warn_outside();
            }
            self.values[if tt_s >= last { n - 1 } else { 0 }]
        } else {
            // Daily nodes: the day index is a guess, corrected by at most one step.
            let mut k = ((tt_s - self.nodes_tt_s[0]) / 86_400.0) as usize;
            k = k.min(n - 2);
            while k > 0 && self.nodes_tt_s[k] > tt_s {
                k -= 1;
            }
            while k + 2 < n && self.nodes_tt_s[k + 1] <= tt_s {
                k += 1;
            }
            let f = (tt_s - self.nodes_tt_s[k]) / (self.nodes_tt_s[k + 1] - self.nodes_tt_s[k]);
            let (a, b) = (&self.values[k], &self.values[k + 1]);
            std::array::from_fn(|i| a[i] + f * (b[i] - a[i]))
        };
        EopValues {
            ut1_minus_tt_s: v[0] - TT_MINUS_TAI_S,
            xp_rad: v[1],
            yp_rad: v[2],
            dx_rad: v[3],
            dy_rad: v[4],
        }
    }

    #[cold]
    fn warn_outside(&self) {
        if !self.outside_seen.swap(true, Ordering::Relaxed) {
            let (a, b) = self.span_mjd();
            crate::notice::warn_once(format!(
                "Earth orientation: epochs outside {} (MJD {a}–{b}) use the nearest end's values (UT1 − UTC, polar motion and pole offsets frozen); give a newer file with `earth_orientation: {{ file: PATH }}`",
                self.source
            ));
        }
    }
}

/// Bounds a real EOP value never leaves (|xp|, |yp| under 1″ since 1900; |UT1 − UTC|
/// ≤ 0.9 s by the definition of UTC; dX, dY under a few mas): a value outside is a unit
/// or column mistake.
fn check_row(r: &EopRow) -> Result<(), String> {
    let checks = [
        ("xp", r.xp_arcsec, 2.0, "arcsec"),
        ("yp", r.yp_arcsec, 2.0, "arcsec"),
        ("UT1-UTC", r.ut1_minus_utc_s, 1.0, "s"),
        ("dX", r.dx_mas, 100.0, "mas"),
        ("dY", r.dy_mas, 100.0, "mas"),
    ];
    for (name, v, bound, unit) in checks {
        if !v.is_finite() {
            return Err(format!("{name} is not a finite number"));
        }
        if v.abs() > bound {
            return Err(format!(
                "{name} = {v} {unit} is beyond ±{bound} {unit} (wrong column or unit?)"
            ));
        }
    }
    Ok(())
}

fn number(text: &str, what: &str) -> Result<f64, String> {
    let t = text.trim();
    t.parse::<f64>()
        .ok()
        .filter(|v| v.is_finite())
        .ok_or_else(|| format!("{what}: `{t}` is not a finite number"))
}

fn mjd_of(text: &str) -> Result<i64, String> {
    let m = number(text, "MJD")?;
    if m.fract() != 0.0 || !(15_020.0..=88_069.0).contains(&m) {
        return Err(format!("MJD {m} is not a whole day between 1900 and 2100"));
    }
    Ok(m as i64)
}

/// IERS finals2000A, Bulletin A columns (bytes 8–15 MJD, 17 flag, 19–27 xp, 38–46 yp,
/// 58 flag, 59–68 UT1 − UTC, 96 flag, 98–106 dX mas, 117–125 dY mas; 1-based, from the
/// file's ReadMe). A day without UT1 ends the data (the file runs on as empty dates).
/// Days with no dX, dY (late predictions) take 0.
fn parse_finals(line: &str) -> Result<Option<EopRow>, String> {
    if line.trim().is_empty() {
        return Ok(None);
    }
    if !line.is_ascii() {
        return Err("non-ASCII text in a fixed-column file".into());
    }
    let col = |a: usize, b: usize| line.get(a - 1..b.min(line.len())).unwrap_or("");
    let mjd = mjd_of(col(8, 15))?;
    if col(59, 68).trim().is_empty() || col(19, 27).trim().is_empty() {
        return Ok(None);
    }
    let optional = |a, b, what| {
        let t = col(a, b);
        if t.trim().is_empty() {
            Ok(0.0)
        } else {
            number(t, what)
        }
    };
    Ok(Some(EopRow {
        mjd_utc: mjd,
        xp_arcsec: number(col(19, 27), "xp (bytes 19-27)")?,
        yp_arcsec: number(col(38, 46), "yp (bytes 38-46)")?,
        ut1_minus_utc_s: number(col(59, 68), "UT1-UTC (bytes 59-68)")?,
        dx_mas: optional(98, 106, "dX (bytes 98-106)")?,
        dy_mas: optional(117, 125, "dY (bytes 117-125)")?,
        predicted: col(58, 58) == "P",
    }))
}

/// IERS EOP 20 C04: `YR MM DD HH MJD x(") y(") UT1-UTC(s) dX(") dY(") …`.
fn parse_c04(line: &str) -> Result<Option<EopRow>, String> {
    let t = line.trim();
    if t.is_empty() || t.starts_with('#') {
        return Ok(None);
    }
    let f: Vec<&str> = t.split_whitespace().collect();
    if f.len() < 10 {
        return Err(format!(
            "{} columns; the EOP 20 C04 layout has at least 10 (YR MM DD HH MJD x y UT1-UTC dX dY)",
            f.len()
        ));
    }
    Ok(Some(EopRow {
        mjd_utc: mjd_of(f[4])?,
        xp_arcsec: number(f[5], "x")?,
        yp_arcsec: number(f[6], "y")?,
        ut1_minus_utc_s: number(f[7], "UT1-UTC")?,
        dx_mas: number(f[8], "dX")? * 1e3,
        dy_mas: number(f[9], "dY")? * 1e3,
        predicted: false,
    }))
}

/// The compact CSV: `mjd_utc,xp_arcsec,yp_arcsec,ut1_minus_utc_s,dx_mas,dy_mas,kind`,
/// kind `I` (IERS) or `P` (prediction); `#` lines are comments.
fn parse_compact(line: &str) -> Result<Option<EopRow>, String> {
    let t = line.trim();
    if t.is_empty() || t.starts_with('#') {
        return Ok(None);
    }
    let f: Vec<&str> = t.split(',').collect();
    if f.len() != 7 {
        return Err(format!("{} fields, 7 expected", f.len()));
    }
    let predicted = match f[6].trim() {
        "I" => false,
        "P" => true,
        other => return Err(format!("kind `{other}`: I or P expected")),
    };
    Ok(Some(EopRow {
        mjd_utc: mjd_of(f[0])?,
        xp_arcsec: number(f[1], "xp_arcsec")?,
        yp_arcsec: number(f[2], "yp_arcsec")?,
        ut1_minus_utc_s: number(f[3], "ut1_minus_utc_s")?,
        dx_mas: number(f[4], "dx_mas")?,
        dy_mas: number(f[5], "dy_mas")?,
        predicted,
    }))
}

#[cfg(test)]
mod tests {
    use super::*;

    const FINALS: &str = "22 414 59683.00 I  0.056532 0.000010  0.452863 0.000017  I-0.0965616 0.0000030  0.2438 0.0020  I     0.328    0.332    -0.128    0.112  0.056547  0.452892 -0.0965557     0.309    -0.141  \n22 415 59684.00 I  0.057880 0.000015  0.454480 0.000018  I-0.0969019 0.0000028  0.4452 0.0026  I     0.320    0.332    -0.128    0.112  0.057823  0.454485 -0.0968994     0.302    -0.137  \n";

    #[test]
    fn finals_columns_are_read_as_the_readme_gives_them() {
        // Two lines of IERS finals2000A.all (astropy-iers-data 0.2026.11.2.0.34.55).
        let t = EopTable::parse(FINALS, "finals").unwrap();
        assert_eq!(t.span_mjd(), (59683, 59684));
        let v = t.at(tt_seconds_of_mjd_utc(59683));
        assert!((v.xp_rad / ARCSEC - 0.056532).abs() < 1e-12);
        assert!((v.yp_rad / ARCSEC - 0.452863).abs() < 1e-12);
        // TAI − UTC = 37 s in 2022 (IERS Bulletin C).
        assert!((v.ut1_minus_tt_s - (-0.0965616 - 37.0 - 32.184)).abs() < 1e-9);
        assert!((v.dx_rad / ARCSEC * 1e3 - 0.328).abs() < 1e-9);
        assert!((v.dy_rad / ARCSEC * 1e3 + 0.128).abs() < 1e-9);
        // Half a day later: the mean of the two days.
        let mid = t.at(tt_seconds_of_mjd_utc(59683) + 43_200.0);
        assert!((mid.xp_rad / ARCSEC - 0.5 * (0.056532 + 0.057880)).abs() < 1e-12);
    }

    #[test]
    fn gaps_unsorted_dates_nan_and_wrong_units_are_refused_with_the_line() {
        let lines: Vec<&str> = FINALS.lines().collect();
        let gap = format!(
            "{}\n{}\n",
            lines[0],
            lines[1].replace("59684.00", "59686.00")
        );
        let e = EopTable::parse(&gap, "f.txt").unwrap_err();
        assert!(e.contains("f.txt:2") && e.contains("gap"), "{e}");
        let back = format!("{}\n{}\n", lines[1], lines[0]);
        let e = EopTable::parse(&back, "f.txt").unwrap_err();
        assert!(e.contains("f.txt:2") && e.contains("increase"), "{e}");
        let nan = format!(
            "{}\n{}\n",
            lines[0],
            lines[1].replace(" 0.057880", "      NaN")
        );
        let e = EopTable::parse(&nan, "f.txt").unwrap_err();
        assert!(e.contains("f.txt:2") && e.contains("xp"), "{e}");
        // Polar motion in mas where arcsec are expected.
        let mas = format!(
            "{}\n{}\n",
            lines[0],
            lines[1].replace(" 0.454480", "454.48000")
        );
        let e = EopTable::parse(&mas, "f.txt").unwrap_err();
        assert!(e.contains("f.txt:2") && e.contains("unit"), "{e}");
        let e = EopTable::parse("hello\nworld\n", "x.txt").unwrap_err();
        assert!(
            e.contains("x.txt") && e.contains("not an Earth-orientation file"),
            "{e}"
        );
    }

    #[test]
    fn epochs_past_the_table_take_its_last_values() {
        let t = EopTable::parse(FINALS, "finals").unwrap();
        let last = t.at(tt_seconds_of_mjd_utc(59684));
        assert_eq!(t.at(tt_seconds_of_mjd_utc(59684) + 1e7), last);
        assert!(t.outside_seen.load(Ordering::Relaxed));
    }

    #[test]
    fn the_shipped_table_covers_1990_to_the_predictions() {
        let t = EopTable::shipped().unwrap();
        let (a, b) = t.span_mjd();
        // MJD 47892 = 1990-01-01; the astropy-iers-data release of Nov 2026 predicts
        // into 2027 (MJD 61406 = 2027-01-01).
        assert_eq!(a, 47_892);
        assert!(b > 61_406, "{b}");
        assert!(t.first_predicted_mjd().is_some_and(|p| p > 61_000));
    }
}
