//! CCSDS Tracking Data Message (TDM), keyword-value notation (CCSDS 503.0-B-2), read.
//!
//! What is read: the header (`CCSDS_TDM_VERS` 1 or 2, `CREATION_DATE`, `ORIGINATOR`,
//! `MESSAGE_ID`), and any number of segments, each a `META_START … META_STOP` block and a
//! `DATA_START … DATA_STOP` block. Supported metadata: `TIME_SYSTEM` (UTC, TAI, TT, GPS),
//! `PARTICIPANT_1`…`PARTICIPANT_5`, `MODE = SEQUENTIAL` with `PATH`, `TIMETAG_REF`
//! (TRANSMIT or RECEIVE), `ANGLE_TYPE` (AZEL or RADEC), `REFERENCE_FRAME` (for RADEC:
//! EME2000, ICRF, GCRF), `RANGE_UNITS = km`, `RANGE_MODE` / `RANGE_MODULUS`, the
//! `CORRECTION_*` values and `CORRECTIONS_APPLIED`, and the informational keys (start and
//! stop times, bands, integration, data quality). Supported data: `RANGE` (km),
//! `DOPPLER_INSTANTANEOUS` (km/s), `ANGLE_1`, `ANGLE_2` (degrees). Anything else is
//! refused with the keyword and line named, never skipped: a measurement misread is
//! worse than none.
//!
//! Written ([`format`]): version 2.0, `CREATION_DATE` as in arcwise's OEMs (now, or
//! `SOURCE_DATE_EPOCH`), every segment on `TIME_SYSTEM = UTC` (epochs converted), the
//! metadata above that applies, and the values at full precision (shortest text that
//! reads back to the same number).

use crate::ephemeris::{file_error_at, FileError};
use crate::text::sanitized;
use crate::time::{Epoch, Scale};
use std::path::Path;

/// What a data line measures.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Observable {
    /// `RANGE`, km.
    Range,
    /// `DOPPLER_INSTANTANEOUS`, range rate, km/s.
    RangeRate,
    /// `ANGLE_1`, degrees: azimuth (AZEL) or right ascension (RADEC).
    Angle1,
    /// `ANGLE_2`, degrees: elevation (AZEL) or declination (RADEC).
    Angle2,
}

impl Observable {
    /// The data keyword, and its observable (one table for reading and writing).
    pub const KEYWORDS: [(&'static str, Observable); 4] = [
        ("RANGE", Observable::Range),
        ("DOPPLER_INSTANTANEOUS", Observable::RangeRate),
        ("ANGLE_1", Observable::Angle1),
        ("ANGLE_2", Observable::Angle2),
    ];

    fn from_keyword(k: &str) -> Option<Observable> {
        Self::KEYWORDS
            .iter()
            .find(|(name, _)| *name == k)
            .map(|(_, o)| *o)
    }
}

/// `ANGLE_TYPE`.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum AngleType {
    /// Azimuth (from north, eastwards) and elevation, topocentric.
    AzEl,
    /// Right ascension and declination.
    RaDec,
}

/// `TIMETAG_REF`: which end of the signal path the epochs are.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum TimetagRef {
    /// When the signal left the first participant of the path.
    Transmit,
    /// When it reached the last.
    Receive,
}

/// One measurement.
#[derive(Clone, Debug, PartialEq)]
pub struct Measurement {
    /// Its time tag (`TIMETAG_REF` says which end of the path).
    pub epoch: Epoch,
    /// What it measures.
    pub observable: Observable,
    /// The value in the TDM's units (km, km/s, degrees).
    pub value: f64,
    /// 1-based line in the file.
    pub line: usize,
}

/// One `META` block and the data after it.
#[derive(Clone, Debug, PartialEq)]
pub struct Segment {
    /// `TIME_SYSTEM`.
    pub time_system: Scale,
    /// `PARTICIPANT_1` … `_5` (index 0 is participant 1).
    pub participants: Vec<String>,
    /// `PATH`: participant numbers along the signal, e.g. `[2, 1, 2]` (two-way).
    pub path: Vec<usize>,
    /// `TIMETAG_REF` (RECEIVE when absent, as the standard says).
    pub timetag_ref: TimetagRef,
    /// `ANGLE_TYPE`, when the segment has angles.
    pub angle_type: Option<AngleType>,
    /// `REFERENCE_FRAME` of RA/Dec angles.
    pub reference_frame: Option<String>,
    /// `RANGE_MODULUS`, km (ranges are known modulo it; absent: unambiguous).
    pub range_modulus_km: Option<f64>,
    /// `CORRECTION_RANGE` (km), `_DOPPLER` (km/s), `_ANGLE_1`, `_ANGLE_2` (deg).
    pub corrections: Vec<(Observable, f64)>,
    /// `CORRECTIONS_APPLIED = YES`: the values already include the corrections.
    pub corrections_applied: bool,
    /// The measurements, in file order (epochs never decrease).
    pub measurements: Vec<Measurement>,
    /// Line of `META_START`.
    pub line: usize,
}

/// A whole TDM.
#[derive(Clone, Debug, PartialEq)]
pub struct Tdm {
    /// `CCSDS_TDM_VERS`.
    pub version: String,
    /// `ORIGINATOR`.
    pub originator: Option<String>,
    /// `CREATION_DATE` as written.
    pub creation_date: Option<String>,
    /// The segments.
    pub segments: Vec<Segment>,
}

/// Writes `tdm` in keyword-value notation (see the module's header).
pub fn format(tdm: &Tdm) -> String {
    let mut s = String::from("CCSDS_TDM_VERS = 2.0\nCOMMENT Written by arcwise\n");
    s.push_str(&format!(
        "CREATION_DATE = {}\nORIGINATOR = ARCWISE\n",
        crate::ephemeris::oem::creation_date()
    ));
    for seg in &tdm.segments {
        s.push_str(&format_meta(seg));
        s.push_str("DATA_START\n");
        for m in &seg.measurements {
            let keyword = Observable::KEYWORDS
                .iter()
                .find(|(_, o)| *o == m.observable)
                .map_or("RANGE", |(k, _)| k);
            s.push_str(&format!(
                "{keyword} = {} {}\n",
                m.epoch.to_utc_string_no_zone(),
                m.value
            ));
        }
        s.push_str("DATA_STOP\n");
    }
    s
}

/// A segment's `META_START … META_STOP` block.
fn format_meta(seg: &Segment) -> String {
    let mut s = String::from("\nMETA_START\nTIME_SYSTEM = UTC\n");
    for (i, p) in seg.participants.iter().enumerate() {
        // Names are checked where they are read; one handed in by other code is made
        // harmless here, so it can never add a line.
        s.push_str(&format!("PARTICIPANT_{} = {}\n", i + 1, sanitized(p)));
    }
    if !seg.path.is_empty() {
        let path: Vec<String> = seg.path.iter().map(|p| p.to_string()).collect();
        s.push_str(&format!("MODE = SEQUENTIAL\nPATH = {}\n", path.join(",")));
    }
    let tag = match seg.timetag_ref {
        TimetagRef::Transmit => "TRANSMIT",
        TimetagRef::Receive => "RECEIVE",
    };
    s.push_str(&format!("TIMETAG_REF = {tag}\n"));
    match seg.angle_type {
        Some(AngleType::AzEl) => s.push_str("ANGLE_TYPE = AZEL\n"),
        Some(AngleType::RaDec) => s.push_str("ANGLE_TYPE = RADEC\n"),
        None => {}
    }
    if let Some(f) = &seg.reference_frame {
        s.push_str(&format!("REFERENCE_FRAME = {}\n", sanitized(f)));
    }
    if seg
        .measurements
        .iter()
        .any(|m| m.observable == Observable::Range)
    {
        s.push_str("RANGE_UNITS = km\n");
    }
    if let Some(m) = seg.range_modulus_km {
        s.push_str(&format!("RANGE_MODE = CONSTANT\nRANGE_MODULUS = {m}\n"));
    }
    for (o, c) in &seg.corrections {
        let k = match o {
            Observable::Range => "CORRECTION_RANGE",
            Observable::RangeRate => "CORRECTION_DOPPLER",
            Observable::Angle1 => "CORRECTION_ANGLE_1",
            Observable::Angle2 => "CORRECTION_ANGLE_2",
        };
        s.push_str(&format!("{k} = {c}\n"));
    }
    if !seg.corrections.is_empty() {
        let applied = if seg.corrections_applied { "YES" } else { "NO" };
        s.push_str(&format!("CORRECTIONS_APPLIED = {applied}\n"));
    }
    s.push_str("META_STOP\n");
    s
}

/// Reads a TDM in keyword-value notation; errors name `path` and the line.
pub fn read(text: &str, path: &Path) -> Result<Tdm, FileError> {
    let mut r = Reader {
        path,
        at: Where::Header,
        tdm: Tdm {
            version: String::new(),
            originator: None,
            creation_date: None,
            segments: Vec::new(),
        },
        keys: Vec::new(),
        path_line: None,
    };
    for (ln, l) in crate::ephemeris::kvn_lines(text) {
        r.line(ln, l)?;
    }
    r.finish()
}

/// The block of the message a line is in.
#[derive(Clone, Copy, PartialEq, Eq)]
enum Where {
    Header,
    Meta,
    BetweenMetaAndData,
    Data,
    AfterData,
}

struct Reader<'a> {
    path: &'a Path,
    at: Where,
    tdm: Tdm,
    // Keys of the current header or metadata block: a key given twice is refused rather
    // than silently overriding the first.
    keys: Vec<String>,
    // Line of the current block's PATH (checked against the participants at META_STOP).
    path_line: Option<usize>,
}

impl Reader<'_> {
    fn error(&self, ln: usize, message: impl Into<String>) -> FileError {
        file_error_at(self.path, Some(ln), message)
    }

    fn segment(&mut self) -> &mut Segment {
        // Only called between META_START and DATA_STOP, which push a segment first.
        let n = self.tdm.segments.len();
        &mut self.tdm.segments[n.saturating_sub(1)]
    }

    fn line(&mut self, ln: usize, l: &str) -> Result<(), FileError> {
        match (self.at, l) {
            (Where::Header | Where::AfterData, "META_START") => {
                if self.tdm.version.is_empty() {
                    return Err(
                        self.error(ln, "not a TDM: the first keyword must be CCSDS_TDM_VERS")
                    );
                }
                self.at = Where::Meta;
                self.keys.clear();
                self.path_line = None;
                self.tdm.segments.push(Segment {
                    time_system: Scale::Utc,
                    participants: Vec::new(),
                    path: Vec::new(),
                    timetag_ref: TimetagRef::Receive,
                    angle_type: None,
                    reference_frame: None,
                    range_modulus_km: None,
                    corrections: Vec::new(),
                    corrections_applied: false,
                    measurements: Vec::new(),
                    line: ln,
                });
                Ok(())
            }
            (Where::Meta, "META_STOP") => {
                self.check_meta(ln)?;
                self.at = Where::BetweenMetaAndData;
                Ok(())
            }
            (Where::BetweenMetaAndData, "DATA_START") => {
                self.at = Where::Data;
                Ok(())
            }
            (Where::Data, "DATA_STOP") => {
                self.at = Where::AfterData;
                Ok(())
            }
            (Where::Header, _) => self.header(ln, l),
            (Where::Meta, _) => self.meta(ln, l),
            (Where::Data, _) => self.data(ln, l),
            (Where::BetweenMetaAndData, _) => {
                Err(self.error(ln, format!("expected DATA_START, got `{}`", sanitized(l))))
            }
            (Where::AfterData, _) => Err(self.error(
                ln,
                format!("expected META_START or the end, got `{}`", sanitized(l)),
            )),
        }
    }

    /// `KEY = VALUE` of a header or metadata line, the key not seen before in its block.
    fn key_value<'l>(&mut self, ln: usize, l: &'l str) -> Result<(&'l str, &'l str), FileError> {
        let (k, v) = l
            .split_once('=')
            .map(|(k, v)| (k.trim(), v.trim()))
            .ok_or_else(|| {
                self.error(ln, format!("expected KEY = VALUE, got `{}`", sanitized(l)))
            })?;
        if self.keys.iter().any(|seen| seen == k) {
            return Err(self.error(
                ln,
                format!("{} is given twice in the same block", sanitized(k)),
            ));
        }
        self.keys.push(k.to_string());
        Ok((k, v))
    }

    fn header(&mut self, ln: usize, l: &str) -> Result<(), FileError> {
        let (k, v) = self.key_value(ln, l)?;
        if self.tdm.version.is_empty() && k != "CCSDS_TDM_VERS" {
            return Err(self.error(ln, "not a TDM: the first keyword must be CCSDS_TDM_VERS"));
        }
        match k {
            "CCSDS_TDM_VERS" => {
                if !(v.starts_with("1.") || v.starts_with("2.")) {
                    return Err(self.error(
                        ln,
                        format!(
                            "CCSDS_TDM_VERS {}: versions 1 and 2 are supported",
                            sanitized(v)
                        ),
                    ));
                }
                self.tdm.version = v.to_string();
            }
            "CREATION_DATE" => self.tdm.creation_date = Some(sanitized(v)),
            "ORIGINATOR" => self.tdm.originator = Some(sanitized(v)),
            "MESSAGE_ID" => {}
            _ => {
                return Err(self.error(ln, format!("unsupported header keyword `{}`", sanitized(k))))
            }
        }
        Ok(())
    }

    fn meta(&mut self, ln: usize, l: &str) -> Result<(), FileError> {
        let (k, v) = self.key_value(ln, l)?;
        let path = self.path;
        let bad =
            |what: &str| file_error_at(path, Some(ln), format!("{k} = {}: {what}", sanitized(v)));
        let number = |v: &str| v.parse::<f64>().ok().filter(|x| x.is_finite());
        let mut seg = self.segment().clone();
        match k {
            "TIME_SYSTEM" => {
                let scale = match v {
                    "UTC" | "TAI" | "TT" | "GPS" => Scale::from_keyword(v),
                    _ => None,
                };
                seg.time_system = scale.ok_or_else(|| bad("supported are UTC, TAI, TT, GPS"))?;
            }
            _ if k.starts_with("PARTICIPANT_") => {
                let n: usize = k
                    .get("PARTICIPANT_".len()..)
                    .and_then(|d| d.parse().ok())
                    .filter(|n| (1..=5).contains(n))
                    .ok_or_else(|| {
                        self.error(
                            ln,
                            format!("unsupported metadata keyword `{}`", sanitized(k)),
                        )
                    })?;
                crate::text::check_name(k, v).map_err(|m| self.error(ln, m))?;
                if seg.participants.len() < n {
                    seg.participants.resize(n, String::new());
                }
                seg.participants[n - 1] = v.to_string();
            }
            "MODE" if v == "SEQUENTIAL" => {}
            "MODE" => return Err(bad("only SEQUENTIAL is supported")),
            "PATH" => {
                let path: Option<Vec<usize>> = v
                    .split(',')
                    .map(|s| s.trim().parse().ok().filter(|n| (1..=5).contains(n)))
                    .collect();
                self.path_line = Some(ln);
                seg.path = path.filter(|p| p.len() >= 2).ok_or_else(|| {
                    bad("expected participant numbers 1–5, comma-separated, at least two")
                })?;
            }
            "TIMETAG_REF" => {
                seg.timetag_ref = match v {
                    "TRANSMIT" => TimetagRef::Transmit,
                    "RECEIVE" => TimetagRef::Receive,
                    _ => return Err(bad("expected TRANSMIT or RECEIVE")),
                }
            }
            "ANGLE_TYPE" => {
                seg.angle_type = Some(match v {
                    "AZEL" => AngleType::AzEl,
                    "RADEC" => AngleType::RaDec,
                    _ => return Err(bad("supported are AZEL and RADEC")),
                })
            }
            "REFERENCE_FRAME" => match v {
                "EME2000" | "ICRF" | "GCRF" => seg.reference_frame = Some(v.to_string()),
                _ => return Err(bad("supported for RA/Dec are EME2000, ICRF, GCRF")),
            },
            "RANGE_UNITS" if v == "km" => {}
            "RANGE_UNITS" => return Err(bad("only km is supported (not range units or seconds)")),
            "RANGE_MODE" if v == "CONSTANT" => {}
            "RANGE_MODE" => return Err(bad("only CONSTANT is supported")),
            "RANGE_MODULUS" => {
                let m = number(v)
                    .filter(|m| *m > 0.0)
                    .ok_or_else(|| bad("expected a positive number of km"))?;
                seg.range_modulus_km = Some(m);
            }
            "CORRECTION_RANGE" | "CORRECTION_DOPPLER" | "CORRECTION_ANGLE_1"
            | "CORRECTION_ANGLE_2" => {
                let c = number(v).ok_or_else(|| bad("expected a number"))?;
                let o = match k {
                    "CORRECTION_RANGE" => Observable::Range,
                    "CORRECTION_DOPPLER" => Observable::RangeRate,
                    "CORRECTION_ANGLE_1" => Observable::Angle1,
                    _ => Observable::Angle2,
                };
                seg.corrections.push((o, c));
            }
            "CORRECTIONS_APPLIED" => {
                seg.corrections_applied = match v {
                    "YES" => true,
                    "NO" => false,
                    _ => return Err(bad("expected YES or NO")),
                }
            }
            // Informational: they change no value arcwise reads.
            "START_TIME"
            | "STOP_TIME"
            | "TRANSMIT_BAND"
            | "RECEIVE_BAND"
            | "INTEGRATION_REF"
            | "INTEGRATION_INTERVAL"
            | "DATA_QUALITY"
            | "TURNAROUND_NUMERATOR"
            | "TURNAROUND_DENOMINATOR" => {}
            _ => {
                return Err(self.error(
                    ln,
                    format!("unsupported metadata keyword `{}`", sanitized(k)),
                ))
            }
        }
        *self.segment() = seg;
        Ok(())
    }

    /// What a segment's data need, checked at `META_STOP`.
    fn check_meta(&mut self, ln: usize) -> Result<(), FileError> {
        let s = self.segment().clone();
        if s.participants.is_empty() {
            return Err(self.error(ln, "no PARTICIPANT_1 in the metadata"));
        }
        if let Some(&p) = s
            .path
            .iter()
            .find(|&&p| s.participants.get(p - 1).is_none_or(|n| n.is_empty()))
        {
            let at = self.path_line.unwrap_or(ln);
            return Err(self.error(
                at,
                format!("PATH names participant {p}, which the metadata does not give"),
            ));
        }
        if s.angle_type == Some(AngleType::RaDec) && s.reference_frame.is_none() {
            return Err(self.error(ln, "ANGLE_TYPE = RADEC needs REFERENCE_FRAME"));
        }
        Ok(())
    }

    fn data(&mut self, ln: usize, l: &str) -> Result<(), FileError> {
        let (k, rest) = l
            .split_once('=')
            .map(|(k, v)| (k.trim(), v.trim()))
            .ok_or_else(|| {
                self.error(
                    ln,
                    format!("expected KEYWORD = EPOCH VALUE, got `{}`", sanitized(l)),
                )
            })?;
        let observable = Observable::from_keyword(k)
            .ok_or_else(|| self.error(ln, format!("unsupported data keyword `{}` (supported: RANGE, DOPPLER_INSTANTANEOUS, ANGLE_1, ANGLE_2)", sanitized(k))))?;
        let f: Vec<&str> = rest.split_whitespace().collect();
        let [epoch_text, value_text] = f[..] else {
            return Err(self.error(
                ln,
                format!(
                    "{k}: expected an epoch and one value, got {} fields",
                    f.len()
                ),
            ));
        };
        let scale = self.segment().time_system;
        let epoch =
            Epoch::parse_iso(epoch_text, scale).map_err(|e| self.error(ln, format!("{k}: {e}")))?;
        let value: f64 = value_text
            .parse()
            .ok()
            .filter(|x: &f64| x.is_finite())
            .ok_or_else(|| {
                self.error(
                    ln,
                    format!("{k}: `{}` is not a finite number", sanitized(value_text)),
                )
            })?;
        self.check_value(ln, k, observable, value)?;
        let seg = self.segment();
        if let Some(last) = seg.measurements.last() {
            if epoch.seconds_since(&last.epoch) < 0.0 {
                let prev = last.line;
                return Err(self.error(
                    ln,
                    format!("{k}: the epoch is before line {prev}'s: data must be in time order"),
                ));
            }
        }
        seg.measurements.push(Measurement {
            epoch,
            observable,
            value,
            line: ln,
        });
        Ok(())
    }

    /// Ranges are positive (and below the modulus); angles need `ANGLE_TYPE` and lie in
    /// their ranges (azimuth and right ascension 0–360°, elevation and declination ±90°).
    fn check_value(&mut self, ln: usize, k: &str, o: Observable, v: f64) -> Result<(), FileError> {
        let (angle_type, modulus) = {
            let s = self.segment();
            (s.angle_type, s.range_modulus_km)
        };
        let ok = match o {
            Observable::Range => v >= 0.0 && modulus.is_none_or(|m| v < m),
            Observable::RangeRate => true,
            Observable::Angle1 | Observable::Angle2 if angle_type.is_none() => {
                return Err(self.error(ln, format!("{k} without ANGLE_TYPE in the metadata")));
            }
            Observable::Angle1 => (0.0..360.0).contains(&v),
            Observable::Angle2 => (-90.0..=90.0).contains(&v),
        };
        if ok {
            Ok(())
        } else {
            let range = match o {
                Observable::Range => "a range is at least 0 km and below RANGE_MODULUS",
                Observable::Angle1 => "ANGLE_1 is 0 to 360 degrees",
                _ => "ANGLE_2 is −90 to 90 degrees",
            };
            Err(self.error(ln, format!("{k} = {v}: out of range ({range})")))
        }
    }

    fn finish(self) -> Result<Tdm, FileError> {
        let end = |m: &str| Err(file_error_at(self.path, None, m.to_string()));
        match self.at {
            _ if self.tdm.version.is_empty() => end("not a TDM: CCSDS_TDM_VERS missing"),
            Where::Header => end("no segment (META_START … DATA_STOP)"),
            Where::Meta => end("META_START without META_STOP"),
            Where::BetweenMetaAndData => end("metadata without a DATA_START … DATA_STOP block"),
            Where::Data => end("DATA_START without DATA_STOP"),
            Where::AfterData => Ok(self.tdm),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// CCSDS 503.0-B-2 Annex E example (tests/data/ccsds/, source in its README).
    const EXAMPLE: &str = include_str!(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/../tests/data/ccsds/ccsds_tdm_503_b2_figE9.tdm"
    ));

    fn read_text(text: &str) -> Result<Tdm, FileError> {
        read(text, Path::new("t.tdm"))
    }

    #[test]
    fn the_standards_example_reads_as_the_standard_says() {
        let t = read_text(EXAMPLE).unwrap();
        assert_eq!(t.version, "2.0");
        assert_eq!(t.originator.as_deref(), Some("JAXA"));
        assert_eq!(t.segments.len(), 1);
        let s = &t.segments[0];
        assert_eq!(s.time_system, Scale::Utc);
        assert_eq!(
            s.participants,
            vec!["yyyy-nnnA".to_string(), "USC1".to_string()]
        );
        // Two-way: from the station (2) to the spacecraft (1) and back.
        assert_eq!(s.path, vec![2, 1, 2]);
        assert_eq!(s.timetag_ref, TimetagRef::Transmit);
        assert_eq!(s.range_modulus_km, Some(1.0e7));
        assert!(s.corrections_applied);
        assert_eq!(s.corrections, vec![(Observable::Range, 0.0)]);
        // 41 ranges every 2 s from 00:41:38 to 00:42:58, first and last as printed.
        assert_eq!(s.measurements.len(), 41);
        assert!(s
            .measurements
            .iter()
            .all(|m| m.observable == Observable::Range));
        let (first, last) = (&s.measurements[0], &s.measurements[40]);
        assert_eq!(first.value, 3198.03679519614);
        assert_eq!(last.value, 3270.46440460551);
        assert_eq!(first.line, 26);
        let t0 = Epoch::parse_iso("2005-09-17T00:41:38", Scale::Utc).unwrap();
        assert!(first.epoch.seconds_since(&t0).abs() < 1e-9);
        assert!((last.epoch.seconds_since(&first.epoch) - 80.0).abs() < 1e-9);
    }

    /// The example with line `n` (1-based) replaced by `with`.
    fn edited(n: usize, with: &str) -> String {
        EXAMPLE
            .lines()
            .enumerate()
            .map(|(i, l)| if i + 1 == n { with } else { l })
            .collect::<Vec<_>>()
            .join("\n")
    }

    #[test]
    fn what_is_not_supported_is_refused_with_the_keyword_and_line() {
        for (n, line, needle) in [
            (1, "CCSDS_TDM_VERS = 3.0", "versions 1 and 2"),
            (7, "TIME_SYSTEM = TDB", "TIME_SYSTEM = TDB"),
            (12, "MODE = SINGLE_DIFF", "only SEQUENTIAL"),
            (13, "PATH = 2,1,7", "participant numbers 1–5"),
            (13, "PATH = 2,3,2", "participant 3"),
            (16, "TIMETAG_REF = MIDDLE", "TRANSMIT or RECEIVE"),
            (18, "RANGE_MODE = COHERENT", "only CONSTANT"),
            (20, "RANGE_UNITS = RU", "only km"),
            (21, "ANGLE_TYPE = XEYN", "AZEL and RADEC"),
            (
                21,
                "FREQ_OFFSET = 0.0",
                "unsupported metadata keyword `FREQ_OFFSET`",
            ),
            (21, "TIME_SYSTEM = UTC", "given twice"),
            (
                26,
                "TRANSMIT_PHASE_CT_1 = 2005-09-17T00:41:38 7.0",
                "unsupported data keyword `TRANSMIT_PHASE_CT_1`",
            ),
            (26, "RANGE = 2005-09-17T00:41:38 NaN", "not a finite number"),
            (26, "RANGE = 2005-09-17T00:41:38 -1.0", "out of range"),
            (26, "RANGE = 2005-09-17T00:41:38 2.0e7", "out of range"),
            (26, "RANGE = 2005-09-17T00:41:38", "one value, got 1"),
            (26, "RANGE = 2005-09-17T25:41:38 3198.0", "RANGE:"),
            (27, "RANGE = 2005-09-17T00:41:30 3199.0", "time order"),
            (
                27,
                "ANGLE_1 = 2005-09-17T00:41:40 12.0",
                "without ANGLE_TYPE",
            ),
            (67, "", "without DATA_STOP"),
        ] {
            let e = read_text(&edited(n, line)).unwrap_err();
            let text = e.to_string();
            assert!(text.starts_with("t.tdm"), "{line}: {text}");
            assert!(text.contains(needle), "{line}: {text}");
            if n < 67 {
                assert_eq!(e.line, Some(n), "{line}: {text}");
            }
        }
        assert!(read_text("")
            .unwrap_err()
            .to_string()
            .contains("CCSDS_TDM_VERS missing"));
        assert!(read_text("CCSDS_OEM_VERS = 2.0\n")
            .unwrap_err()
            .to_string()
            .contains("not a TDM"));
    }

    #[test]
    fn what_is_written_reads_back_the_same() {
        let mut t = read_text(EXAMPLE).unwrap();
        // Angles too, in a second segment on GPS time (written back on UTC).
        let gps = EXAMPLE
            .replace("TIME_SYSTEM = UTC", "TIME_SYSTEM = GPS")
            .replace(
                "RANGE_UNITS = km",
                "RANGE_UNITS = km\nANGLE_TYPE = RADEC\nREFERENCE_FRAME = EME2000",
            )
            .replace(
                "RANGE = 2005-09-17T00:41:38.000000 3198.03679519614",
                "ANGLE_1 = 2005-09-17T00:41:38.5 359.99999999999994",
            )
            .replace(
                "RANGE = 2005-09-17T00:41:40.000000 3199.82505720811",
                "ANGLE_2 = 2005-09-17T00:41:38.5 -12.345678901234567",
            );
        t.segments.extend(read_text(&gps).unwrap().segments);
        let again = read_text(&format(&t)).unwrap();
        assert_eq!(again.segments.len(), 2);
        for (a, b) in t.segments.iter().zip(&again.segments) {
            assert_eq!(b.time_system, Scale::Utc);
            assert_eq!(
                (&a.participants, &a.path, a.timetag_ref),
                (&b.participants, &b.path, b.timetag_ref)
            );
            assert_eq!(
                (a.angle_type, &a.reference_frame, a.range_modulus_km),
                (b.angle_type, &b.reference_frame, b.range_modulus_km)
            );
            assert_eq!(
                (&a.corrections, a.corrections_applied),
                (&b.corrections, b.corrections_applied)
            );
            assert_eq!(a.measurements.len(), b.measurements.len());
            for (m, n) in a.measurements.iter().zip(&b.measurements) {
                assert_eq!((m.observable, m.value), (n.observable, n.value));
                // Epochs to the microsecond the UTC text carries.
                assert!(n.epoch.seconds_since(&m.epoch).abs() < 1e-6, "{m:?} {n:?}");
            }
        }
        // A participant name handed in with a line break cannot add a keyword.
        t.segments[0].participants[0] = "SAT\nPATH = 1,1".into();
        let text = format(&t);
        assert!(!text.contains("SAT\nPATH"));
        assert!(text.contains("PARTICIPANT_1 = SAT?PATH = 1,1"));
    }

    #[test]
    fn angles_are_checked_against_their_type() {
        let meta = EXAMPLE.replace("RANGE_UNITS = km", "RANGE_UNITS = km\nANGLE_TYPE = AZEL");
        let with = |l: &str| meta.replace("RANGE = 2005-09-17T00:41:38.000000 3198.03679519614", l);
        let ok = read_text(&with("ANGLE_2 = 2005-09-17T00:41:38 45.0")).unwrap();
        assert_eq!(ok.segments[0].angle_type, Some(AngleType::AzEl));
        assert_eq!(
            ok.segments[0].measurements[0].observable,
            Observable::Angle2
        );
        for bad in [
            "ANGLE_2 = 2005-09-17T00:41:38 91.0",
            "ANGLE_1 = 2005-09-17T00:41:38 360.0",
            "ANGLE_1 = 2005-09-17T00:41:38 -0.5",
        ] {
            let e = read_text(&with(bad)).unwrap_err().to_string();
            // Line 27: the metadata gained a line.
            assert!(
                e.contains("out of range") && e.contains(":27:"),
                "{bad}: {e}"
            );
        }
        // RA/Dec needs the frame it is given in.
        let radec = EXAMPLE.replace("RANGE_UNITS = km", "RANGE_UNITS = km\nANGLE_TYPE = RADEC");
        assert!(read_text(&radec)
            .unwrap_err()
            .to_string()
            .contains("needs REFERENCE_FRAME"));
        let framed = radec.replace(
            "ANGLE_TYPE = RADEC",
            "ANGLE_TYPE = RADEC\nREFERENCE_FRAME = EME2000",
        );
        assert_eq!(
            read_text(&framed).unwrap().segments[0]
                .reference_frame
                .as_deref(),
            Some("EME2000")
        );
    }

    #[test]
    fn a_control_character_in_a_participant_never_reaches_a_message_raw() {
        let e = read_text(&edited(10, "PARTICIPANT_1 = sat\u{1b}[2J"))
            .unwrap_err()
            .to_string();
        assert!(!e.contains('\u{1b}'), "{e:?}");
    }
}
