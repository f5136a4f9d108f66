//! Epochs: strict ISO 8601 UTC text at the boundary, a uniform scale inside.
//!
//! Files carry epochs as `YYYY-MM-DDTHH:MM:SS[.fff…][Z]` in UTC. Inside, time is a
//! count of SI seconds on the TAI scale from a reference epoch ([`TimeAxis`]), so that
//! differences never jump at a leap second. Leap seconds come from hifitime's table.

use hifitime::{Epoch as HfEpoch, TimeScale, Unit};
use std::fmt;

/// Time scales an input file may declare.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Scale {
    /// Coordinated Universal Time (with leap seconds).
    Utc,
    /// International Atomic Time.
    Tai,
    /// Terrestrial Time (TAI + 32.184 s).
    Tt,
    /// GPS time (TAI − 19 s).
    Gps,
}

impl Scale {
    /// The CCSDS `TIME_SYSTEM` keyword, if it is one we read.
    pub fn from_keyword(k: &str) -> Option<Scale> {
        match k {
            "UTC" => Some(Scale::Utc),
            "TAI" => Some(Scale::Tai),
            "TT" => Some(Scale::Tt),
            "GPS" => Some(Scale::Gps),
            _ => None,
        }
    }
}

/// An instant in time (nanosecond resolution), independent of any scale.
#[derive(Clone, Copy, Debug, PartialEq, PartialOrd)]
pub struct Epoch(HfEpoch);

/// A malformed or impossible epoch string.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("epoch `{text}` is not ISO 8601 UTC (expected YYYY-MM-DDTHH:MM:SS[.fff][Z]): {reason}")]
pub struct EpochParseError {
    /// The text as given.
    pub text: String,
    /// What is wrong with it.
    pub reason: String,
}

/// The calendar form of an ordinal date `YYYY-DDD…` (the rest unchanged), or `None`
/// when `s` is not one.
fn calendar_of_ordinal(s: &str, text: &str) -> Result<Option<String>, EpochParseError> {
    let b = s.as_bytes();
    let ordinal = b.len() >= 17
        && b[4] == b'-'
        && (b[8] == b'T' || b[8] == b' ')
        && b[5..8].iter().all(u8::is_ascii_digit)
        && b[..4].iter().all(u8::is_ascii_digit);
    if !ordinal {
        return Ok(None);
    }
    let year: i32 = s[..4].parse().map_err(|_| parse_error(text, "bad year"))?;
    let doy: i64 = s[5..8]
        .parse()
        .map_err(|_| parse_error(text, "bad day of year"))?;
    let leap = (year % 4 == 0 && year % 100 != 0) || year % 400 == 0;
    if !(1..=if leap { 366 } else { 365 }).contains(&doy) {
        return Err(parse_error(text, "day of year out of range"));
    }
    let (y, m, d) = civil_from_days(days_from_civil(year, 1, 1) + doy - 1);
    Ok(Some(format!("{y:04}-{m:02}-{d:02}{}", &s[8..])))
}

/// Nanoseconds of the fraction after the seconds of `s` (`.d` to `.ddddddddd`; 0 when
/// there is none).
fn fraction_ns(s: &str, text: &str) -> Result<u32, EpochParseError> {
    let b = s.as_bytes();
    if b.len() <= 19 {
        return Ok(0);
    }
    if b[19] != b'.' {
        return Err(parse_error(text, "unexpected text after the seconds"));
    }
    let frac = &s[20..];
    if frac.is_empty() || frac.len() > 9 || !frac.bytes().all(|c| c.is_ascii_digit()) {
        return Err(parse_error(
            text,
            "fraction of a second must be 1 to 9 digits",
        ));
    }
    format!("{frac:0<9}")
        .parse()
        .map_err(|_| parse_error(text, "bad fraction"))
}

fn parse_error(text: &str, reason: impl Into<String>) -> EpochParseError {
    EpochParseError {
        text: text.to_string(),
        reason: reason.into(),
    }
}

impl Epoch {
    /// Parses strict ISO 8601 UTC: `2031-05-04T12:00:00.000Z` (the `Z` and the
    /// fraction are optional; a space may stand for `T`). Anything else is an error:
    /// we do not guess at time zones or formats.
    pub fn parse_utc(text: &str) -> Result<Self, EpochParseError> {
        Self::parse_iso(text, Scale::Utc)
    }

    /// Parses the same ISO 8601 form as [`Epoch::parse_utc`], read on time scale `scale`
    /// (for files that declare TAI, TT or GPS time).
    pub fn parse_iso(text: &str, scale: Scale) -> Result<Self, EpochParseError> {
        let s = text.trim();
        let s = s.strip_suffix('Z').unwrap_or(s);
        // Byte positions below assume ASCII; anything else is not an ISO epoch anyway.
        if !s.is_ascii() {
            return Err(parse_error(text, "non-ASCII characters"));
        }
        // Day-of-year form `YYYY-DDDThh:mm:ss` (ISO 8601 ordinal dates, used in CCSDS
        // messages): rewritten as the calendar date, then read as usual.
        let ordinal = calendar_of_ordinal(s, text)?;
        let s = ordinal.as_deref().unwrap_or(s);
        let b = s.as_bytes();
        if b.len() < 19 {
            return Err(parse_error(text, "too short"));
        }
        let sep_ok = b[4] == b'-'
            && b[7] == b'-'
            && (b[10] == b'T' || b[10] == b' ')
            && b[13] == b':'
            && b[16] == b':';
        if !sep_ok {
            return Err(parse_error(text, "separators out of place"));
        }
        let num = |range: std::ops::Range<usize>, what: &str| -> Result<u32, EpochParseError> {
            let part = &s[range];
            if !part.bytes().all(|c| c.is_ascii_digit()) {
                return Err(parse_error(
                    text,
                    format!("{what} `{part}` is not a number"),
                ));
            }
            part.parse::<u32>()
                .map_err(|_| parse_error(text, format!("{what} `{part}` is not a number")))
        };
        let year = num(0..4, "year")? as i32;
        let month = num(5..7, "month")?;
        let day = num(8..10, "day")?;
        let hour = num(11..13, "hour")?;
        let minute = num(14..16, "minute")?;
        let second = num(17..19, "second")?;
        let nanos = fraction_ns(s, text)?;
        if !(1..=12).contains(&month) {
            return Err(parse_error(text, "month out of range"));
        }
        let days_in_month = match month {
            1 | 3 | 5 | 7 | 8 | 10 | 12 => 31,
            4 | 6 | 9 | 11 => 30,
            _ if (year % 4 == 0 && year % 100 != 0) || year % 400 == 0 => 29,
            _ => 28,
        };
        if day < 1 || day > days_in_month {
            return Err(parse_error(text, "day out of range for the month"));
        }
        if hour > 23 || minute > 59 || second > 60 {
            return Err(parse_error(text, "time of day out of range"));
        }
        if !(1900..=2200).contains(&year) {
            return Err(parse_error(text, "year outside 1900-2200"));
        }
        if second == 60 && scale != Scale::Utc {
            return Err(parse_error(text, "second 60 exists only in UTC"));
        }
        let day = days_from_civil(year, month, day);
        let sod_ns = i128::from(hour * 3600 + minute * 60 + second) * NS + i128::from(nanos);
        let tai_ns = match scale {
            Scale::Utc => {
                let dat = tai_minus_utc_on_day(day);
                // 23:59:60 exists only at the end of a day that ends with a leap second.
                if second == 60
                    && !(hour == 23 && minute == 59 && tai_minus_utc_on_day(day + 1) - dat == NS)
                {
                    return Err(parse_error(
                        text,
                        "second 60 exists only at 23:59:60 UTC of a day that ends with a leap second",
                    ));
                }
                day as i128 * DAY_NS + sod_ns + dat
            }
            Scale::Tai => day as i128 * DAY_NS + sod_ns,
            // TT = TAI + 32.184 s; GPS = TAI − 19 s (definitions of the scales).
            Scale::Tt => day as i128 * DAY_NS + sod_ns - 32_184_000_000,
            Scale::Gps => day as i128 * DAY_NS + sod_ns + 19 * NS,
        };
        Ok(Epoch::from_tai_ns_since_1900(tai_ns))
    }

    /// The epoch `ns` nanoseconds of TAI after 1900-01-01T00:00:00 TAI.
    fn from_tai_ns_since_1900(ns: i128) -> Epoch {
        let origin = HfEpoch::from_gregorian_tai(1900, 1, 1, 0, 0, 0, 0);
        Epoch(origin + hifitime::Duration::from_total_nanoseconds(ns))
    }

    /// Nanoseconds of TAI since 1900-01-01T00:00:00 TAI.
    fn tai_ns_since_1900(&self) -> i128 {
        let origin = HfEpoch::from_gregorian_tai(1900, 1, 1, 0, 0, 0, 0);
        (self.0 - origin).total_nanoseconds()
    }

    /// The UTC calendar fields `(year, month, day, hour, minute, second, nanosecond)`,
    /// with `second = 60` during an inserted leap second, after rounding to `round_ns`.
    fn utc_fields(&self, round_ns: i128) -> (i32, u32, u32, u32, u32, u32, u32) {
        let (day, sod) = self.utc_day_and_ns(round_ns);
        let (y, mo, d) = civil_from_days(day);
        let ns = (sod % NS) as u32;
        let secs = (sod / NS) as u32;
        if secs >= 86_400 {
            return (y, mo, d, 23, 59, 60 + (secs - 86_400), ns);
        }
        (y, mo, d, secs / 3600, secs / 60 % 60, secs % 60, ns)
    }

    /// The UTC day (days since 1900-01-01) and nanoseconds into it (up to 86401 s on a
    /// day with a leap second), after rounding to `round_ns`.
    fn utc_day_and_ns(&self, round_ns: i128) -> (i64, i128) {
        let t = self.tai_ns_since_1900();
        let t = (t + round_ns / 2).div_euclid(round_ns) * round_ns;
        let mut day = t.div_euclid(DAY_NS) as i64;
        loop {
            let dat = tai_minus_utc_on_day(day);
            let sod = t - day as i128 * DAY_NS - dat;
            // A day with a leap second lasts 86401 s.
            let length = DAY_NS + tai_minus_utc_on_day(day + 1) - dat;
            if sod < 0 {
                day -= 1;
            } else if sod >= length {
                day += 1;
            } else {
                return (day, sod);
            }
        }
    }

    /// The UTC day as a modified Julian date and the seconds into it (to the
    /// nanosecond; up to 86401 s on a day with a leap second).
    pub fn utc_mjd_and_seconds(&self) -> (i64, f64) {
        let (day, ns) = self.utc_day_and_ns(1);
        (day + 15_020, ns as f64 / 1e9)
    }

    /// Formats as ISO 8601 UTC with microseconds and a trailing `Z`,
    /// e.g. `2031-05-04T12:00:00.000000Z`. Round-trips through [`Epoch::parse_utc`]
    /// to the microsecond.
    pub fn to_utc_string(&self) -> String {
        let mut s = self.to_utc_string_no_zone();
        s.push('Z');
        s
    }

    /// As [`Epoch::to_utc_string`] without the `Z` (the CCSDS OEM habit).
    pub fn to_utc_string_no_zone(&self) -> String {
        // Rounded to the microsecond first, so that 59.9999996 s carries into the minute;
        // an inserted leap second is written as 23:59:60.
        let (y, mo, d, h, mi, sec, ns) = self.utc_fields(1_000);
        format!(
            "{y:04}-{mo:02}-{d:02}T{h:02}:{mi:02}:{sec:02}.{:06}",
            ns / 1000
        )
    }

    /// Seconds (SI, TAI scale) from `other` to `self`.
    pub fn seconds_since(&self, other: &Epoch) -> f64 {
        (self.0 - other.0).to_seconds()
    }

    /// The epoch `seconds` (SI) after `self`.
    pub fn plus_seconds(&self, seconds: f64) -> Epoch {
        Epoch(self.0 + Unit::Second * seconds)
    }

    /// Days (TDB) since J2000.0 (2000-01-01T12:00:00 TDB), for Sun and Moon series.
    pub fn tdb_days_since_j2000(&self) -> f64 {
        self.0.to_tdb_seconds() / 86_400.0
    }

    /// Julian centuries of TT since J2000.0.
    pub fn tt_centuries_since_j2000(&self) -> f64 {
        (self.0.to_jde_tt_days() - 2_451_545.0) / 36_525.0
    }

    /// TAI − UTC at this epoch, seconds (leap seconds from hifitime's table; during an
    /// inserted leap second, the value before it).
    pub fn tai_minus_utc_s(&self) -> f64 {
        let (day, _) = self.utc_day_and_ns(1);
        tai_minus_utc_on_day(day) as f64 / 1e9
    }

    /// TT seconds since J2000.0 (2000-01-01T12:00:00 TT): the Earth-orientation time
    /// argument (f64: 0.5 µs resolution a century from J2000).
    pub fn tt_seconds_since_j2000(&self) -> f64 {
        // hifitime counts TAI from 1900-01-01T00:00:00 TAI; J2000.0 TT is 36524.5 days
        // later less TT − TAI.
        self.tai_seconds_j1900() - (36_524.5 * 86_400.0 - TT_MINUS_TAI_S)
    }

    /// The underlying hifitime epoch.
    pub fn as_hifitime(&self) -> HfEpoch {
        self.0
    }

    /// Seconds of TAI since J1900 (hifitime's origin); mostly for tests.
    pub fn tai_seconds_j1900(&self) -> f64 {
        self.0.to_time_scale(TimeScale::TAI).duration.to_seconds()
    }
}

impl fmt::Display for Epoch {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.to_utc_string())
    }
}

const NS: i128 = 1_000_000_000;
const DAY_NS: i128 = 86_400 * NS;

/// TAI − UTC in force during the UTC day `day` (days since 1900-01-01), ns. Leap
/// seconds are inserted at the end of a UTC day, so one value holds for the whole day;
/// it is read at the day's noon from hifitime's leap-second table (IERS leap seconds,
/// 0 before 1972).
/// TAI − UTC, seconds, on the UTC day that starts at Modified Julian Date `mjd` (an
/// integer day; 0h UTC), from the same leap-second table as every other conversion.
pub fn tai_minus_utc_on_mjd(mjd: i64) -> f64 {
    // MJD 15020 is 1900-01-01, day 0 of the table's count.
    tai_minus_utc_on_day(mjd - 15_020) as f64 / 1e9
}

/// TT seconds since J2000.0 (2000-01-01T12:00:00 TT) of 0h UTC on day `mjd`.
pub fn tt_seconds_of_mjd_utc(mjd: i64) -> f64 {
    (mjd as f64 - 51_544.5) * 86_400.0 + tai_minus_utc_on_mjd(mjd) + TT_MINUS_TAI_S
}

/// TT − TAI, seconds (by definition).
pub const TT_MINUS_TAI_S: f64 = 32.184;

fn tai_minus_utc_on_day(day: i64) -> i128 {
    let noon = HfEpoch::from_gregorian_tai(1900, 1, 1, 12, 0, 0, 0) + Unit::Day * day;
    (noon.leap_seconds(true).unwrap_or(0.0) * 1e9).round() as i128
}

/// Days from 1900-01-01 to the civil date (proleptic Gregorian; H. Hinnant's
/// `days_from_civil`, shifted to our origin). MJD = this + 15020.
pub fn days_from_civil(y: i32, m: u32, d: u32) -> i64 {
    let y = i64::from(if m <= 2 { y - 1 } else { y });
    let era = y.div_euclid(400);
    let yoe = y - era * 400;
    let m = i64::from(m);
    let doy = (153 * (if m > 2 { m - 3 } else { m + 9 }) + 2) / 5 + i64::from(d) - 1;
    let doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;
    era * 146_097 + doe - 719_468 + 25_567
}

/// The civil date of a day count from 1900-01-01 (inverse of [`days_from_civil`]).
pub fn civil_from_days(days: i64) -> (i32, u32, u32) {
    let z = days - 25_567 + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z - era * 146_097;
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = (doy - (153 * mp + 2) / 5 + 1) as u32;
    let m = if mp < 10 { mp + 3 } else { mp - 9 } as u32;
    let y = yoe + era * 400 + i64::from(m <= 2);
    (y as i32, m, d)
}

/// The time axis of a propagation: a reference epoch and SI seconds (TAI) from it.
///
/// Every force sees time as `t_s`, seconds from this reference, so integrators work in
/// small numbers and keep their precision.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct TimeAxis {
    /// The epoch where `t_s = 0`.
    pub reference: Epoch,
}

impl TimeAxis {
    /// A time axis starting at `reference`.
    pub fn new(reference: Epoch) -> Self {
        Self { reference }
    }

    /// Seconds from the reference to `epoch`.
    pub fn seconds(&self, epoch: &Epoch) -> f64 {
        epoch.seconds_since(&self.reference)
    }

    /// The epoch `t_s` seconds after the reference.
    pub fn epoch(&self, t_s: f64) -> Epoch {
        self.reference.plus_seconds(t_s)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn parses_and_formats_iso_utc() {
        let e = Epoch::parse_utc("2031-05-04T12:00:00.000Z").unwrap();
        assert_eq!(e.to_utc_string(), "2031-05-04T12:00:00.000000Z");
        let f = Epoch::parse_utc("2031-05-04T12:00:00.123456Z").unwrap();
        assert!((f.seconds_since(&e) - 0.123456).abs() < 1e-9);
        assert_eq!(
            Epoch::parse_utc(&f.to_utc_string())
                .unwrap()
                .to_utc_string(),
            f.to_utc_string()
        );
    }

    #[test]
    fn rejects_malformed_epochs() {
        for bad in [
            "",
            "2031-05-04",
            "2031-13-04T12:00:00Z",
            "2031-02-30T12:00:00Z",
            "2031-05-04T25:00:00Z",
            "2031/05/04T12:00:00Z",
            "2031-05-04T12:00:00+02:00",
            "2031-05-04T12:00:00.Z",
            "2031-05-04T00:00:0é.000Z",
            "yesterday",
        ] {
            assert!(Epoch::parse_utc(bad).is_err(), "accepted {bad:?}");
        }
    }

    #[test]
    fn leap_second_counts_in_differences() {
        // A leap second was inserted at the end of 2016-12-31 (IERS Bulletin C 52;
        // common knowledge): one UTC "day" across it lasts 86401 SI seconds.
        let a = Epoch::parse_utc("2016-12-31T00:00:00Z").unwrap();
        let b = Epoch::parse_utc("2017-01-01T00:00:00Z").unwrap();
        assert!((b.seconds_since(&a) - 86_401.0).abs() < 1e-9);
        // TAI − UTC = 37 s since 2017 (IERS).
        assert!((b.tai_minus_utc_s() - 37.0).abs() < 1e-9);
    }

    #[test]
    fn day_of_year_epochs_read_as_their_calendar_date() {
        // 2031-124 is 4 May 2031 (31+28+31+30 = 120 days before May; common knowledge).
        let a = Epoch::parse_utc("2031-124T12:00:00Z").unwrap();
        assert_eq!(a, Epoch::parse_utc("2031-05-04T12:00:00Z").unwrap());
        let b = Epoch::parse_utc("2024-366T23:59:59.5").unwrap();
        assert_eq!(b.to_utc_string(), "2024-12-31T23:59:59.500000Z");
        assert!(Epoch::parse_utc("2031-366T00:00:00Z").is_err());
        assert!(Epoch::parse_utc("2031-000T00:00:00Z").is_err());
    }

    #[test]
    fn rounding_carries_into_the_minute() {
        let e = Epoch::parse_utc("2031-05-04T12:00:59.9999996Z").unwrap();
        assert_eq!(e.to_utc_string(), "2031-05-04T12:01:00.000000Z");
    }
}
