//! CCSDS Orbit Ephemeris Message (OEM), keyword-value notation (CCSDS 502.0-B).
//!
//! Written: version 2.0 with `CREATION_DATE` (now, or `SOURCE_DATE_EPOCH` when set, for
//! reproducible files), one segment per part of the ephemeris (a new one after each
//! impulsive maneuver), `CENTER_NAME = EARTH`, `REF_FRAME = GCRF`, `TIME_SYSTEM = UTC`.
//! Read ([`read_message`]): any OEM 1–3 in KVN — segments, comments, calendar or
//! day-of-year epochs, optional acceleration columns (ignored), covariance blocks
//! (skipped). [`parse`] then takes only what arcwise can use without misreading it: one
//! object, Earth-centred, on UTC, TAI, TT or GPS time, and rotates its states to GCRF:
//! from EME2000 by the frame bias, from ITRF (any realization) by the IAU 2006/2000A chain
//! with the shipped IERS Earth-orientation data.

use super::{file_error, Ephemeris, EphemerisPoint, FileError};
use crate::state::StateVector;
use crate::time::{Epoch, Scale};
use std::path::Path;

/// Formats an ephemeris as an OEM.
pub fn format(eph: &Ephemeris) -> String {
    // Names are checked where they are read; a name handed in by other code is made
    // harmless here, so it can never add a line to the header.
    let name = if eph.object_name.is_empty() {
        "UNNAMED".to_string()
    } else {
        crate::text::sanitized(&eph.object_name)
    };
    let id = if eph.object_id.is_empty() {
        "UNKNOWN".to_string()
    } else {
        crate::text::sanitized(&eph.object_id)
    };
    let mut s = String::with_capacity(512 + eph.points.len() * 140);
    s.push_str("CCSDS_OEM_VERS = 2.0\n");
    let frame = eph.frame.keyword();
    s.push_str(&format!("COMMENT Written by arcwise; states in {frame}\n"));
    if eph.frame == Frame::Itrf {
        s.push_str("COMMENT Earth-fixed through IERS Earth-orientation data (IAU 2006/2000A)\n");
    }
    s.push_str(&format!("CREATION_DATE = {}\n", creation_date()));
    s.push_str("ORIGINATOR = ARCWISE\n");
    for (k, seg) in eph.segments().into_iter().enumerate() {
        let pts = &eph.points[seg];
        s.push_str("\nMETA_START\n");
        s.push_str(&format!("OBJECT_NAME = {name}\nOBJECT_ID = {id}\n"));
        s.push_str(&format!(
            "CENTER_NAME = EARTH\nREF_FRAME = {frame}\nTIME_SYSTEM = UTC\n"
        ));
        if let (Some(a), Some(b)) = (pts.first(), pts.last()) {
            s.push_str(&format!(
                "START_TIME = {}\nSTOP_TIME = {}\n",
                a.epoch.to_utc_string_no_zone(),
                b.epoch.to_utc_string_no_zone()
            ));
        }
        s.push_str("META_STOP\n");
        if k > 0 {
            s.push_str("COMMENT This segment begins after an impulsive maneuver\n");
        }
        s.push('\n');
        for p in pts {
            let x = &p.state;
            s.push_str(&format!(
                "{} {} {} {} {} {} {}\n",
                p.epoch.to_utc_string_no_zone(),
                x[0],
                x[1],
                x[2],
                x[3],
                x[4],
                x[5]
            ));
        }
    }
    s
}

/// `CREATION_DATE`: the current UTC time, or `SOURCE_DATE_EPOCH` (seconds since 1970,
/// the reproducible-builds convention) when set, so that a file can be made byte for byte
/// the same again.
pub(crate) fn creation_date() -> String {
    let unix_s = std::env::var("SOURCE_DATE_EPOCH")
        .ok()
        .and_then(|v| v.trim().parse::<i64>().ok())
        .unwrap_or_else(|| {
            std::time::SystemTime::now()
                .duration_since(std::time::UNIX_EPOCH)
                .map(|d| d.as_secs() as i64)
                .unwrap_or(0)
        });
    Epoch::parse_utc("1970-01-01T00:00:00Z")
        .map(|e| {
            // Seconds since 1970 in UTC count no leap seconds; add the TAI−UTC change.
            let guess = e.plus_seconds(unix_s as f64);
            let shifted = guess.plus_seconds(guess.tai_minus_utc_s() - e.tai_minus_utc_s());
            let text = shifted.to_utc_string_no_zone();
            text[..19].to_string()
        })
        .unwrap_or_else(|_| "1970-01-01T00:00:00".into())
}

/// An OEM as read, before arcwise's own restrictions.
#[derive(Clone, Debug, PartialEq)]
pub struct OemMessage {
    /// The states (segments marked in `segment_starts`).
    pub ephemeris: Ephemeris,
    /// File line of each state.
    pub lines: Vec<usize>,
    /// `CENTER_NAME` of the segments, and the line where it was given.
    pub center_name: (String, usize),
    /// `REF_FRAME` of each segment.
    pub ref_frames: Vec<String>,
    /// `CREATION_DATE` of the header, if given.
    pub creation_date: Option<String>,
    /// `ORIGINATOR` of the header, if given.
    pub originator: Option<String>,
}

/// Parses an OEM for arcwise: [`read_message`], then one Earth-centred object, rotated to
/// GCRF (ITRF segments through the shipped Earth-orientation table).
pub fn parse(text: &str, path: &Path) -> Result<(Ephemeris, Vec<usize>), FileError> {
    parse_with(text, path, None)
}

/// As [`parse`], ITRF segments through `earth` (the shipped table if `None`).
pub fn parse_with(
    text: &str,
    path: &Path,
    earth: Option<&crate::earth::EarthOrientation>,
) -> Result<(Ephemeris, Vec<usize>), FileError> {
    let mut m = read_message(text, path)?;
    if !m.center_name.0.eq_ignore_ascii_case("EARTH") {
        return Err(file_error(
            path,
            Some(m.center_name.1),
            format!(
                "CENTER_NAME = {}: only Earth-centred ephemerides are supported",
                m.center_name.0
            ),
        ));
    }
    to_gcrf(&mut m.ephemeris, &m.ref_frames, earth).map_err(|e| file_error(path, None, e))?;
    Ok((m.ephemeris, m.lines))
}

pub use crate::frames::Frame;

/// Rotates every segment's states to GCRF from its `REF_FRAME` (ITRF through `earth`,
/// velocities included).
fn to_gcrf(
    eph: &mut Ephemeris,
    frames: &[String],
    earth: Option<&crate::earth::EarthOrientation>,
) -> Result<(), String> {
    let segments = eph.segments();
    for (seg, name) in segments.into_iter().zip(frames) {
        let frame = Frame::from_keyword(name).unwrap_or(Frame::Gcrf);
        let rotate = crate::frames::ToGcrf::with_earth(frame, earth)?;
        for p in &mut eph.points[seg] {
            let r = nalgebra::Vector3::new(p.state[0], p.state[1], p.state[2]);
            let v = nalgebra::Vector3::new(p.state[3], p.state[4], p.state[5]);
            if let (r, Some(v)) = rotate.apply(&p.epoch, r, Some(v)) {
                p.state = StateVector::new(r[0], r[1], r[2], v[0], v[1], v[2]);
            }
        }
    }
    Ok(())
}

/// Reads an OEM (KVN) as it is: every segment, its metadata and states.
pub fn read_message(text: &str, path: &Path) -> Result<OemMessage, FileError> {
    let mut r = Reader {
        path,
        at: Where::Header,
        eph: Ephemeris::default(),
        center: None,
        ref_frames: Vec::new(),
        creation_date: None,
        originator: None,
        lines: Vec::new(),
        scale: None,
        saw_version: false,
        segments: 0,
        header_keys: Vec::new(),
        meta_keys: Vec::new(),
    };
    for (ln, l) in crate::ephemeris::kvn_lines(text) {
        r.line(ln, l)?;
    }
    r.finish()
}

/// The block of an OEM a line is in.
#[derive(PartialEq)]
enum Where {
    Header,
    Meta,
    Data,
    Covariance,
}

/// An OEM being read, line by line.
struct Reader<'a> {
    path: &'a Path,
    at: Where,
    eph: Ephemeris,
    center: Option<(String, usize)>,
    ref_frames: Vec<String>,
    creation_date: Option<String>,
    originator: Option<String>,
    lines: Vec<usize>,
    scale: Option<Scale>,
    saw_version: bool,
    segments: usize,
    // Keys seen in the header and in the current metadata block: a key given twice is
    // refused rather than silently overriding the first.
    header_keys: Vec<&'a str>,
    meta_keys: Vec<&'a str>,
}

impl<'a> Reader<'a> {
    fn error(&self, ln: usize, message: impl Into<String>) -> FileError {
        file_error(self.path, Some(ln), message)
    }

    /// One non-empty, non-comment line `l` (trimmed) at line number `ln`.
    fn line(&mut self, ln: usize, l: &'a str) -> Result<(), FileError> {
        let kv = l.split_once('=').map(|(k, v)| (k.trim(), v.trim()));
        if let (Where::Header | Where::Meta, Some((k, _))) = (&self.at, kv) {
            let keys = if self.at == Where::Header {
                &mut self.header_keys
            } else {
                &mut self.meta_keys
            };
            if keys.contains(&k) {
                return Err(self.error(ln, format!("{k} is given twice in the same block")));
            }
            keys.push(k);
        }
        match self.at {
            Where::Header | Where::Data if l == "META_START" => {
                self.at = Where::Meta;
                self.scale = None;
                self.segments += 1;
                self.meta_keys.clear();
                if self.segments > 1 && !self.eph.points.is_empty() {
                    self.eph.segment_starts.push(self.eph.points.len());
                }
                Ok(())
            }
            Where::Header => self.header(ln, l, kv),
            Where::Meta if l == "META_STOP" => {
                if self.scale.is_none() {
                    return Err(self.error(ln, "TIME_SYSTEM missing from the metadata"));
                }
                self.at = Where::Data;
                Ok(())
            }
            Where::Meta => {
                let (k, v) = kv.ok_or_else(|| {
                    self.error(
                        ln,
                        format!("expected KEY = VALUE in the metadata, got `{l}`"),
                    )
                })?;
                self.meta(ln, k, v)
            }
            Where::Data if l == "COVARIANCE_START" => {
                self.at = Where::Covariance;
                Ok(())
            }
            Where::Data => self.state(ln, l),
            Where::Covariance => {
                if l == "COVARIANCE_STOP" {
                    self.at = Where::Data;
                }
                Ok(())
            }
        }
    }

    /// A header line.
    fn header(&mut self, ln: usize, l: &str, kv: Option<(&str, &str)>) -> Result<(), FileError> {
        match kv {
            Some(("CCSDS_OEM_VERS", v)) => {
                if !(v.starts_with('1') || v.starts_with('2') || v.starts_with('3')) {
                    return Err(self.error(ln, format!("CCSDS_OEM_VERS {v} is not supported")));
                }
                self.saw_version = true;
            }
            Some(("CREATION_DATE", v)) => self.creation_date = Some(v.to_string()),
            Some(("ORIGINATOR", v)) => self.originator = Some(v.to_string()),
            Some(("MESSAGE_ID" | "CLASSIFICATION", _)) => {}
            _ => {
                if !self.saw_version {
                    return Err(
                        self.error(ln, "not an OEM: the first keyword must be CCSDS_OEM_VERS")
                    );
                }
                return Err(self.error(ln, format!("unexpected line in the OEM header: `{l}`")));
            }
        }
        Ok(())
    }

    /// A metadata `k = v`.
    fn meta(&mut self, ln: usize, k: &str, v: &str) -> Result<(), FileError> {
        let segments = self.segments;
        match k {
            "OBJECT_NAME" | "OBJECT_ID" => {
                crate::text::check_name(k, v).map_err(|m| self.error(ln, m))?;
                let field = if k == "OBJECT_NAME" {
                    &mut self.eph.object_name
                } else {
                    &mut self.eph.object_id
                };
                // An ephemeris is one object's: segments of several objects in one file
                // would be merged into one impossible trajectory.
                if segments > 1 && *field != v {
                    let first = field.clone();
                    return Err(self.error(ln, format!("{k} = {v} in segment {segments}, but the first segment's is {first}: give one object per file")));
                }
                *field = v.to_string();
            }
            "CENTER_NAME" => match &self.center {
                Some((c, _)) if c != v => {
                    return Err(self.error(ln, format!("CENTER_NAME = {v} in segment {segments}, but the first segment's is {c}: one centre per file")));
                }
                Some(_) => {}
                None => self.center = Some((v.to_string(), ln)),
            },
            "REF_FRAME" => {
                if Frame::from_keyword(v).is_none() {
                    return Err(self.error(ln, format!("REF_FRAME = {v}: only GCRF, ICRF, EME2000 (inertial) or ITRF (Earth-fixed) are supported")));
                }
                self.ref_frames.push(v.to_string());
            }
            "TIME_SYSTEM" => {
                self.scale = Some(Scale::from_keyword(v).ok_or_else(|| {
                    self.error(
                        ln,
                        format!("TIME_SYSTEM = {v}: supported are UTC, TAI, TT, GPS"),
                    )
                })?);
            }
            "REF_FRAME_EPOCH"
            | "START_TIME"
            | "STOP_TIME"
            | "USEABLE_START_TIME"
            | "USEABLE_STOP_TIME"
            | "INTERPOLATION"
            | "INTERPOLATION_DEGREE" => {}
            _ => return Err(self.error(ln, format!("unknown metadata keyword `{k}`"))),
        }
        Ok(())
    }

    /// A state line: an epoch and 6 (or 9, with accelerations) numbers.
    fn state(&mut self, ln: usize, l: &str) -> Result<(), FileError> {
        let f: Vec<&str> = l.split_whitespace().collect();
        if f.len() != 7 && f.len() != 10 {
            return Err(self.error(
                ln,
                format!(
                    "expected an epoch and 6 (or 9) numbers, got {} fields",
                    f.len()
                ),
            ));
        }
        let sc = self.scale.unwrap_or(Scale::Utc);
        let epoch = Epoch::parse_iso(f[0], sc).map_err(|e| self.error(ln, e.to_string()))?;
        let mut x = [0.0; 6];
        for k in 0..6 {
            let v: f64 = f[k + 1]
                .parse()
                .map_err(|_| self.error(ln, format!("`{}` is not a number", f[k + 1])))?;
            if !v.is_finite() {
                return Err(self.error(ln, format!("`{}` is not finite", f[k + 1])));
            }
            x[k] = v;
        }
        self.eph.points.push(EphemerisPoint {
            epoch,
            state: StateVector::from_column_slice(&x),
        });
        self.lines.push(ln);
        Ok(())
    }

    /// The message, once every line is read.
    fn finish(self) -> Result<OemMessage, FileError> {
        let path = self.path;
        if !self.saw_version {
            return Err(file_error(path, None, "not an OEM: CCSDS_OEM_VERS missing"));
        }
        if self.segments == 0 || self.at == Where::Meta {
            return Err(file_error(
                path,
                None,
                "no complete META_START … META_STOP block",
            ));
        }
        if self.at == Where::Covariance {
            return Err(file_error(
                path,
                None,
                "COVARIANCE_START without COVARIANCE_STOP",
            ));
        }
        Ok(OemMessage {
            ephemeris: self.eph,
            lines: self.lines,
            center_name: self.center.unwrap_or_else(|| ("EARTH".into(), 0)),
            ref_frames: self.ref_frames,
            creation_date: self.creation_date,
            originator: self.originator,
        })
    }
}
