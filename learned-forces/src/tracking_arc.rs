//! Tracking arcs: measurements by sites, read from a CCSDS TDM or from the measurement
//! CSV layout, joined to the sites file (which gives each site's place, mask, σ and bias),
//! and written back in either form.
//!
//! The measurement CSV layout (our own):
//!
//! ```text
//! epoch_utc,site,measurement,value[,sigma]
//! 2031-05-04T10:00:00.000Z,ALPHA-RADAR,range_km,1523.118,0.02
//! 2031-05-04T10:00:00.000Z,ALPHA-RADAR,azimuth_deg,123.4567
//! ```
//!
//! `measurement` is one of the words of [`Kind::TABLE`] (the unit in the word); `value`
//! and `sigma` are in that unit; without `sigma` the sites file's σ for the kind is used.
//! Ranges are two-way and tagged when the signal came back (`one_way_range_km`: sent by
//! the object). In a TDM, `RANGE` (km) is half the round-trip light distance for a
//! two-way path (as the standard's Annex E example's values show) and the distance for a
//! one-way path; the receiving participant of `PATH` must be a site of the sites file.

use crate::arc::{Arc, ArcDefaults, Observation, Observed, Tracked, Tracking};
use propagator::earth::EarthOrientation;
use propagator::ephemeris::{file_error_at, FileError};
use propagator::text::sanitized;
use propagator::tracking::light_time::Tag;
use propagator::tracking::measurement::Kind;
use propagator::tracking::sites_file::{Noise, SiteEntry};
use propagator::tracking::tdm::{self, AngleType, Observable, Segment, TimetagRef};
use propagator::Epoch;
use std::path::Path;

/// The measurement CSV header (without the optional `sigma`).
pub const CSV_HEADER: &str = "epoch_utc,site,measurement,value";

/// Whether `text` is in the measurement CSV layout (its header starts like it).
pub fn is_measurement_csv(text: &str) -> bool {
    text.trim_start_matches('\u{feff}')
        .lines()
        .find(|l| !l.trim().is_empty() && !l.trim_start().starts_with('#'))
        .is_some_and(|h| h.replace(' ', "").starts_with(CSV_HEADER))
}

/// The sites' noise for `kind`, if the site measures it.
pub fn noise_of(entry: &SiteEntry, kind: Kind) -> Option<Noise> {
    match kind {
        Kind::Range | Kind::OneWayRange => entry.range,
        Kind::RangeRate => entry.range_rate,
        Kind::Azimuth | Kind::Elevation => entry.azel,
        Kind::RightAscension | Kind::Declination => entry.radec,
    }
}

/// The tracking context of `defaults`: its sites (required) and Earth orientation.
fn tracking_of(defaults: &ArcDefaults, path: &Path) -> Result<Tracking, FileError> {
    let sites = defaults.sites.clone().ok_or_else(|| {
        file_error_at(
            path,
            None,
            "this file holds tracking measurements: give the sites that made them (--sites SITES.yaml)",
        )
    })?;
    let earth = match &defaults.earth {
        Some(e) => e.clone(),
        None => EarthOrientation::shipped().map_err(|e| file_error_at(path, None, e))?,
    };
    Ok(Tracking { sites, earth })
}

/// A measurement of `kind` by the site named `site`, `value` in the file's unit.
fn tracked(
    t: &Tracking,
    site: &str,
    kind: Kind,
    tag: Tag,
    value_file: f64,
    sigma_file: Option<f64>,
) -> Result<Tracked, String> {
    let Some(index) = t.sites.iter().position(|s| s.site.name == site) else {
        return Err(format!(
            "site {:?} is not in the sites file (it has {})",
            sanitized(site),
            t.sites
                .iter()
                .map(|s| s.site.name.as_str())
                .collect::<Vec<_>>()
                .join(", ")
        ));
    };
    let info = kind.info();
    let noise = noise_of(&t.sites[index], kind);
    let sigma = match (sigma_file, noise) {
        (Some(s), _) if s.is_finite() && s > 0.0 => s * info.to_model,
        (Some(s), _) => return Err(format!("sigma {s}: must be positive and finite")),
        (None, Some(n)) => n.sigma,
        (None, None) => {
            return Err(format!(
                "site {} has no σ for {} in the sites file and the row gives none",
                sanitized(site),
                info.word
            ))
        }
    };
    Ok(Tracked {
        site: index,
        kind,
        tag,
        value: value_file * info.to_model,
        sigma,
        bias: noise.map_or(0.0, |n| n.bias),
    })
}

/// Reads the measurement CSV layout (see the module's header).
pub fn from_csv(text: &str, path: &Path, defaults: &ArcDefaults) -> Result<Arc, FileError> {
    let t = tracking_of(defaults, path)?;
    let mut rows = text
        .trim_start_matches('\u{feff}')
        .lines()
        .enumerate()
        .map(|(i, l)| (i + 1, l.trim()))
        .filter(|(_, l)| !l.is_empty() && !l.starts_with('#'));
    let (hline, header) = rows
        .next()
        .ok_or_else(|| file_error_at(path, None, "the file is empty"))?;
    let names: Vec<&str> = header.split(',').map(str::trim).collect();
    let with_sigma = match names.as_slice() {
        ["epoch_utc", "site", "measurement", "value"] => false,
        ["epoch_utc", "site", "measurement", "value", "sigma"] => true,
        _ => {
            return Err(file_error_at(
                path,
                Some(hline),
                format!("the header must be `{CSV_HEADER}[,sigma]`"),
            ))
        }
    };
    let mut observations = Vec::new();
    for (ln, line) in rows {
        let at = |m: String| file_error_at(path, Some(ln), m);
        let fields: Vec<&str> = line.split(',').map(str::trim).collect();
        if fields.len() != names.len() {
            return Err(at(format!(
                "{} fields, the header has {}",
                fields.len(),
                names.len()
            )));
        }
        let epoch = Epoch::parse_utc(fields[0]).map_err(|e| at(e.to_string()))?;
        let kind = Kind::from_word(fields[2]).ok_or_else(|| {
            let words: Vec<&str> = Kind::TABLE.iter().map(|i| i.word).collect();
            at(format!(
                "unknown measurement {:?}; expected one of {}",
                sanitized(fields[2]),
                words.join(", ")
            ))
        })?;
        let number = |s: &str, what: &str| {
            s.parse::<f64>()
                .ok()
                .filter(|v| v.is_finite())
                .ok_or_else(|| at(format!("{what} {:?} is not a finite number", sanitized(s))))
        };
        let value = number(fields[3], "value")?;
        let sigma = if with_sigma {
            Some(number(fields[4], "sigma")?)
        } else {
            None
        };
        let m = tracked(&t, fields[1], kind, Tag::Receive, value, sigma).map_err(at)?;
        observations.push(Observation {
            epoch,
            observed: Observed::Tracking(m),
            line: ln,
        });
    }
    Ok(Arc {
        observations,
        tracking: Some(std::sync::Arc::new(t)),
    })
}

/// Reads a TDM's measurements, each joined to the site that received it.
pub fn from_tdm(text: &str, path: &Path, defaults: &ArcDefaults) -> Result<Arc, FileError> {
    let t = tracking_of(defaults, path)?;
    let doc = tdm::read(text, path)?;
    let mut observations = Vec::new();
    for seg in &doc.segments {
        let at = |line: usize, m: String| file_error_at(path, Some(line), m);
        let (site, two_way) = segment_site(seg).map_err(|m| at(seg.line, m))?;
        if let Some(m) = seg.range_modulus_km.filter(|m| *m < 1.0e6) {
            return Err(at(
                seg.line,
                format!("RANGE_MODULUS = {m} km: ambiguous ranges are not supported"),
            ));
        }
        if seg.angle_type == Some(AngleType::RaDec) {
            let frame = seg.reference_frame.as_deref().unwrap_or("");
            if !matches!(frame, "GCRF" | "ICRF") {
                return Err(at(
                    seg.line,
                    format!(
                        "REFERENCE_FRAME = {}: right ascension and declination are read in GCRF or ICRF only",
                        sanitized(frame)
                    ),
                ));
            }
        }
        let tag = match seg.timetag_ref {
            TimetagRef::Receive => Tag::Receive,
            TimetagRef::Transmit if two_way => Tag::Transmit,
            TimetagRef::Transmit => {
                return Err(at(
                    seg.line,
                    "TIMETAG_REF = TRANSMIT is supported for two-way paths only".into(),
                ))
            }
        };
        for m in &seg.measurements {
            let kind = kind_of(m.observable, seg.angle_type, two_way).map_err(|e| at(m.line, e))?;
            let correction = if seg.corrections_applied {
                0.0
            } else {
                seg.corrections
                    .iter()
                    .find(|(o, _)| *o == m.observable)
                    .map_or(0.0, |(_, c)| *c)
            };
            let tr = tracked(&t, &site, kind, tag, m.value + correction, None)
                .map_err(|e| at(m.line, e))?;
            observations.push(Observation {
                epoch: m.epoch,
                observed: Observed::Tracking(tr),
                line: m.line,
            });
        }
    }
    // Segments may interleave in time; the arc is in time order (stable: file order
    // within an epoch).
    observations.sort_by(|a, b| a.epoch.seconds_since(&b.epoch).total_cmp(&0.0));
    Ok(Arc {
        observations,
        tracking: Some(std::sync::Arc::new(t)),
    })
}

/// The receiving participant's name of a segment's path, and whether the path is
/// two-way (site → object → site).
fn segment_site(seg: &Segment) -> Result<(String, bool), String> {
    let name = |p: usize| seg.participants.get(p.wrapping_sub(1)).cloned();
    match seg.path.as_slice() {
        [a, _, c] if a == c => Ok((name(*c).unwrap_or_default(), true)),
        [_, b] => Ok((name(*b).unwrap_or_default(), false)),
        [] => Err("PATH is required: it says which participant is the site".into()),
        _ => Err(format!(
            "PATH = {:?}: only one-way (2 participants) and two-way (site, object, site) paths are supported",
            seg.path
        )),
    }
}

/// The kind of a TDM data line.
fn kind_of(o: Observable, angles: Option<AngleType>, two_way: bool) -> Result<Kind, String> {
    Ok(match (o, angles) {
        (Observable::Range, _) if two_way => Kind::Range,
        (Observable::Range, _) => Kind::OneWayRange,
        (Observable::RangeRate, _) => Kind::RangeRate,
        (Observable::Angle1, Some(AngleType::AzEl)) => Kind::Azimuth,
        (Observable::Angle2, Some(AngleType::AzEl)) => Kind::Elevation,
        (Observable::Angle1, Some(AngleType::RaDec)) => Kind::RightAscension,
        (Observable::Angle2, Some(AngleType::RaDec)) => Kind::Declination,
        (_, None) => return Err("angles without ANGLE_TYPE".into()),
    })
}

/// The measurements of a tracking arc in the measurement CSV layout (values and σ in
/// the file units of each kind; full precision).
pub fn to_csv(arc: &Arc, t: &Tracking) -> String {
    let mut s = format!("{CSV_HEADER},sigma\n");
    for o in &arc.observations {
        let Some(m) = o.as_tracked() else { continue };
        let info = m.kind.info();
        s.push_str(&format!(
            "{},{},{},{},{}\n",
            o.epoch.to_utc_string(),
            t.sites[m.site].site.name,
            info.word,
            m.value / info.to_model,
            m.sigma / info.to_model
        ));
    }
    s
}

/// The measurements of a tracking arc as a TDM: one segment per site and group of
/// kinds (ranges, range rates, az/el, RA/Dec), the object named `object`.
pub fn to_tdm(arc: &Arc, t: &Tracking, object: &str) -> String {
    let groups: [(&[Kind], Option<AngleType>); 5] = [
        (&[Kind::Range], None),
        (&[Kind::OneWayRange], None),
        (&[Kind::RangeRate], None),
        (&[Kind::Azimuth, Kind::Elevation], Some(AngleType::AzEl)),
        (
            &[Kind::RightAscension, Kind::Declination],
            Some(AngleType::RaDec),
        ),
    ];
    let mut segments = Vec::new();
    for (si, entry) in t.sites.iter().enumerate() {
        for (kinds, angle_type) in groups {
            let measurements: Vec<tdm::Measurement> = arc
                .observations
                .iter()
                .filter_map(|o| {
                    let m = o
                        .as_tracked()
                        .filter(|m| m.site == si && kinds.contains(&m.kind))?;
                    Some(tdm::Measurement {
                        epoch: o.epoch,
                        observable: observable_of(m.kind),
                        value: m.value / m.kind.info().to_model,
                        line: 0,
                    })
                })
                .collect();
            if measurements.is_empty() {
                continue;
            }
            let two_way = kinds == [Kind::Range];
            segments.push(Segment {
                time_system: propagator::time::Scale::Utc,
                participants: vec![object.to_string(), entry.site.name.clone()],
                path: if two_way { vec![2, 1, 2] } else { vec![1, 2] },
                timetag_ref: TimetagRef::Receive,
                angle_type,
                // The registry's name for the axes GCRF directions are given in (GCRF
                // is the ICRF's axes at the geocentre; `GCRF` itself is not a TDM value).
                reference_frame: (angle_type == Some(AngleType::RaDec)).then(|| "ICRF".into()),
                range_modulus_km: None,
                corrections: vec![],
                corrections_applied: false,
                measurements,
                line: 0,
            });
        }
    }
    tdm::format(&tdm::Tdm {
        version: "2.0".into(),
        originator: Some("ARCWISE".into()),
        creation_date: None,
        segments,
    })
}

/// The TDM data keyword of a kind.
fn observable_of(kind: Kind) -> Observable {
    match kind {
        Kind::Range | Kind::OneWayRange => Observable::Range,
        Kind::RangeRate => Observable::RangeRate,
        Kind::Azimuth | Kind::RightAscension => Observable::Angle1,
        Kind::Elevation | Kind::Declination => Observable::Angle2,
    }
}
