//! Space weather for the thermosphere: the Sun's 10.7 cm radio flux and the Ap
//! geomagnetic index, as constants or as a daily table.
//!
//! The table is arcwise's own CSV layout, one row per UTC day:
//!
//! ```text
//! # comment lines start with '#'; a header line starting with "date" is skipped
//! date,f107,f107a,ap_00,ap_03,ap_06,ap_09,ap_12,ap_15,ap_18,ap_21
//! 2026-03-01,151.2,148.9,7,5,4,9,12,15,6,4
//! ```
//!
//! `f107`: the F10.7 flux observed that day (sfu, 10⁻²² W m⁻² Hz⁻¹, at 1 AU or as
//! observed: the source's choice, stated in the file's comments); `f107a`: its 81-day
//! centred mean; `ap_HH`: the eight 3-hourly ap values starting at HH:00 UTC. Dates must
//! follow one another day by day (no gaps, no repeats). An epoch the table does not
//! cover — the model needs the previous day's flux and 57 h of ap history — is an error
//! naming the file and the dates it covers: a thermosphere silently run on stale values
//! would make a storm look like an anomaly.

use std::path::Path;

use super::nrlmsise00::Geomagnetic;
use crate::time::{civil_from_days, days_from_civil};

/// Solar flux and geomagnetic activity for NRLMSISE-00 at one epoch.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Drivers {
    /// F10.7 of the previous day, sfu.
    pub f107: f64,
    /// 81-day centred mean of F10.7, sfu.
    pub f107a: f64,
    /// Daily Ap (constants) or the storm-time history (a table).
    pub geomagnetic: Geomagnetic,
}

/// Where the drivers come from.
#[derive(Clone, Debug)]
pub enum SpaceWeather {
    /// The same values at every epoch (daily-Ap mode of the model).
    Constant(Drivers),
    /// A daily table (storm-time mode: the 3-hourly history).
    Table(std::sync::Arc<SpaceWeatherTable>),
}

impl SpaceWeather {
    /// The drivers at UTC day `mjd` (modified Julian date) and `seconds` into it.
    pub fn drivers(&self, mjd: i64, seconds: f64) -> Result<Drivers, String> {
        match self {
            SpaceWeather::Constant(d) => Ok(*d),
            SpaceWeather::Table(t) => t.drivers(mjd, seconds),
        }
    }
}

/// One day of the table.
#[derive(Clone, Copy, Debug, PartialEq)]
struct Day {
    f107: f64,
    f107a: f64,
    ap: [f64; 8],
}

/// A daily space-weather table (see the module's documentation for the layout).
#[derive(Clone, Debug, PartialEq)]
pub struct SpaceWeatherTable {
    origin: String,
    first_mjd: i64,
    days: Vec<Day>,
}

/// Largest ap (and Ap) the index scale has.
const AP_MAX: f64 = 400.0;

impl SpaceWeatherTable {
    /// Reads a table file.
    pub fn read(path: &Path) -> Result<SpaceWeatherTable, String> {
        let text = crate::input::read_text(path, crate::input::MAX_DATA_BYTES)?;
        SpaceWeatherTable::parse(&text, &path.display().to_string())
    }

    /// Parses table text from `origin` (for messages).
    pub fn parse(text: &str, origin: &str) -> Result<SpaceWeatherTable, String> {
        let mut first_mjd = None;
        let mut days: Vec<Day> = Vec::new();
        for (i, raw) in text.lines().enumerate() {
            let line = raw.trim();
            if line.is_empty() || line.starts_with('#') || line.starts_with("date") {
                continue;
            }
            let at = format!("{origin}:{}", i + 1);
            let (mjd, day) = parse_row(line).map_err(|e| format!("{at}: {e}"))?;
            match first_mjd {
                None => first_mjd = Some(mjd),
                Some(first) => {
                    let expected = first + days.len() as i64;
                    if mjd != expected {
                        let why = if mjd < expected {
                            "dates must increase, one row per day"
                        } else {
                            "a gap: every day must have a row"
                        };
                        return Err(format!(
                            "{at}: {} where {} was expected ({why})",
                            date_of_mjd(mjd),
                            date_of_mjd(expected)
                        ));
                    }
                }
            }
            days.push(day);
        }
        let Some(first_mjd) = first_mjd else {
            return Err(format!(
                "{origin}: no rows (expected date,f107,f107a and eight 3-hourly ap)"
            ));
        };
        Ok(SpaceWeatherTable {
            origin: origin.to_string(),
            first_mjd,
            days,
        })
    }

    /// The first and last day covered (ISO dates).
    pub fn span(&self) -> (String, String) {
        (
            date_of_mjd(self.first_mjd),
            date_of_mjd(self.first_mjd + self.days.len() as i64 - 1),
        )
    }

    fn day(&self, mjd: i64, why: &str) -> Result<&Day, String> {
        let k = mjd - self.first_mjd;
        if k < 0 || k >= self.days.len() as i64 {
            let (a, b) = self.span();
            return Err(format!(
                "space weather {}: no row for {} ({why}); the file covers {a} to {b}",
                self.origin,
                date_of_mjd(mjd)
            ));
        }
        Ok(&self.days[k as usize])
    }

    /// The drivers at UTC day `mjd` and `seconds` into it: the previous day's F10.7, the
    /// day's 81-day mean, and the storm-time ap history (the current 3-hour value, the
    /// three before it, and the means over 12–33 h and 36–57 h before).
    pub fn drivers(&self, mjd: i64, seconds: f64) -> Result<Drivers, String> {
        let today = self.day(mjd, "the day's 81-day mean F10.7 and ap")?;
        let f107 = self.day(mjd - 1, "the previous day's F10.7")?.f107;
        let slot = ((seconds / 10_800.0).floor() as i64).clamp(0, 7);
        let ap_back = |n: i64| -> Result<f64, String> {
            let s = slot - n;
            let day = self.day(mjd + s.div_euclid(8), "57 h of 3-hourly ap history")?;
            Ok(day.ap[s.rem_euclid(8) as usize])
        };
        let mean = |from: i64, to: i64| -> Result<f64, String> {
            let mut sum = 0.0;
            for n in from..=to {
                sum += ap_back(n)?;
            }
            Ok(sum / (to - from + 1) as f64)
        };
        let daily = today.ap.iter().sum::<f64>() / 8.0;
        Ok(Drivers {
            f107,
            f107a: today.f107a,
            geomagnetic: Geomagnetic::History([
                daily,
                ap_back(0)?,
                ap_back(1)?,
                ap_back(2)?,
                ap_back(3)?,
                mean(4, 11)?,
                mean(12, 19)?,
            ]),
        })
    }
}

/// One row: the date's MJD and the day's values.
fn parse_row(line: &str) -> Result<(i64, Day), String> {
    let fields: Vec<&str> = line.split(',').map(str::trim).collect();
    if fields.len() != 11 {
        return Err(format!(
            "{} fields where 11 are expected (date,f107,f107a,ap_00,...,ap_21)",
            fields.len()
        ));
    }
    let mjd = mjd_of_date(fields[0])?;
    let number = |k: usize, name: &str| -> Result<f64, String> {
        let v: f64 = fields[k]
            .parse()
            .map_err(|_| format!("{name} {:?} is not a number", fields[k]))?;
        if !v.is_finite() {
            return Err(format!("{name} is {v}"));
        }
        Ok(v)
    };
    let mut day = Day {
        f107: number(1, "f107")?,
        f107a: number(2, "f107a")?,
        ap: [0.0; 8],
    };
    for (name, v) in [("f107", day.f107), ("f107a", day.f107a)] {
        if !(v > 0.0 && v < 1000.0) {
            return Err(format!(
                "{name} = {v} sfu is outside (0, 1000): F10.7 is a positive flux of order 70–300"
            ));
        }
    }
    for j in 0..8 {
        let name = format!("ap_{:02}", 3 * j);
        let v = number(3 + j, &name)?;
        if !(0.0..=AP_MAX).contains(&v) {
            return Err(format!("{name} = {v} is outside the ap scale 0–{AP_MAX}"));
        }
        day.ap[j] = v;
    }
    Ok((mjd, day))
}

/// MJD of an ISO date `YYYY-MM-DD`, read by the project's strict epoch parser.
pub fn mjd_of_date(text: &str) -> Result<i64, String> {
    let bad = || format!("date {text:?} is not YYYY-MM-DD");
    if text.len() != 10 || text.contains(['T', 'Z', ' ']) {
        return Err(bad());
    }
    crate::time::Epoch::parse_utc(&format!("{text}T00:00:00Z"))
        .map(|e| e.utc_mjd_and_seconds().0)
        .map_err(|_| bad())
}

/// MJD of 1900-01-01, the origin of [`days_from_civil`].
const MJD_OF_1900: i64 = 15_020;

/// ISO date of an MJD.
pub fn date_of_mjd(mjd: i64) -> String {
    let (y, m, d) = civil_from_days(mjd - MJD_OF_1900);
    format!("{y:04}-{m:02}-{d:02}")
}

/// Day of the year (1–366) of an MJD.
pub fn day_of_year(mjd: i64) -> i64 {
    let (y, _, _) = civil_from_days(mjd - MJD_OF_1900);
    mjd - MJD_OF_1900 - days_from_civil(y, 1, 1) + 1
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn calendar_round_trips() {
        // MJD 51544 = 2000-01-01 and 40587 = 1970-01-01 (facts of the trade).
        assert_eq!(mjd_of_date("2000-01-01").unwrap(), 51_544);
        assert_eq!(mjd_of_date("1970-01-01").unwrap(), 40_587);
        for mjd in 40_000..70_000 {
            let date = date_of_mjd(mjd);
            assert_eq!(mjd_of_date(&date).unwrap(), mjd);
            let first = mjd_of_date(&format!("{}-01-01", &date[..4])).unwrap();
            assert_eq!(day_of_year(mjd), mjd - first + 1);
        }
        assert_eq!(day_of_year(mjd_of_date("2024-12-31").unwrap()), 366);
        assert_eq!(day_of_year(mjd_of_date("2026-03-01").unwrap()), 60);
        assert!(mjd_of_date("2026-02-29").is_err());
        assert!(mjd_of_date("2026-3-01").is_err());
    }

    fn table(rows: &[&str]) -> Result<SpaceWeatherTable, String> {
        SpaceWeatherTable::parse(&rows.join("\n"), "sw.csv")
    }

    #[test]
    fn history_reaches_back_across_days() {
        let t = table(&[
            "date,f107,f107a,ap_00,ap_03,ap_06,ap_09,ap_12,ap_15,ap_18,ap_21",
            "2026-03-01,100,140,1,2,3,4,5,6,7,8",
            "2026-03-02,110,141,9,10,11,12,13,14,15,16",
            "2026-03-03,120,142,17,18,19,20,21,22,23,24",
            "2026-03-04,130,143,25,26,27,28,29,30,31,32",
        ])
        .unwrap();
        // 2026-03-04 07:00 UTC: slot 2 of day 4 (value 27).
        let d = t
            .drivers(mjd_of_date("2026-03-04").unwrap(), 7.0 * 3600.0)
            .unwrap();
        assert_eq!(d.f107, 120.0);
        assert_eq!(d.f107a, 143.0);
        let Geomagnetic::History(ap) = d.geomagnetic else {
            panic!("a table gives the storm-time history")
        };
        assert_eq!(ap[0], (25..=32).sum::<i32>() as f64 / 8.0);
        assert_eq!(&ap[1..5], &[27.0, 26.0, 25.0, 24.0]);
        // 12–33 h before: slots 4..=11 back = values 23 down to 16.
        assert_eq!(ap[5], (16..=23).sum::<i32>() as f64 / 8.0);
        assert_eq!(ap[6], (8..=15).sum::<i32>() as f64 / 8.0);
        // Not enough history on the first days: an error naming the file.
        let e = t
            .drivers(mjd_of_date("2026-03-02").unwrap(), 0.0)
            .unwrap_err();
        assert!(e.contains("sw.csv") && e.contains("2026-02-28"), "{e}");
        let e = t
            .drivers(mjd_of_date("2026-03-05").unwrap(), 0.0)
            .unwrap_err();
        assert!(e.contains("2026-03-01 to 2026-03-04"), "{e}");
    }

    #[test]
    fn bad_rows_are_named() {
        let ok = "2026-03-01,100,140,1,2,3,4,5,6,7,8";
        for (rows, needle) in [
            (
                vec![ok, "2026-03-03,100,140,1,2,3,4,5,6,7,8"],
                "sw.csv:2: 2026-03-03 where 2026-03-02 was expected (a gap",
            ),
            (
                vec![ok, ok],
                "sw.csv:2: 2026-03-01 where 2026-03-02 was expected (dates must increase",
            ),
            (
                vec!["2026-03-01,NaN,140,1,2,3,4,5,6,7,8"],
                "sw.csv:1: f107 is NaN",
            ),
            (
                vec!["2026-03-01,-5,140,1,2,3,4,5,6,7,8"],
                "sw.csv:1: f107 = -5",
            ),
            (
                vec!["2026-03-01,100,140,1,2,3,4,5,6,7,800"],
                "sw.csv:1: ap_21 = 800",
            ),
            (vec!["2026-03-01,100,140,1,2,3"], "sw.csv:1: 6 fields"),
            (vec!["03/01/2026,100,140,1,2,3,4,5,6,7,8"], "sw.csv:1: date"),
            (vec!["# only a comment"], "sw.csv: no rows"),
        ] {
            let e = table(&rows).unwrap_err();
            assert!(e.contains(needle), "{e}\n  expected: {needle}");
        }
    }
}
