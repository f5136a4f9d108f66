//! CSV: `epoch_utc,x_km,y_km,z_km[,vx_km_s,vy_km_s,vz_km_s][,sigma_km]`, header required.
//!
//! Read with the `csv` crate: a UTF-8 byte-order mark, quoted fields and CRLF line ends
//! are accepted. Blank lines and lines starting with `#` are ignored. Columns are found
//! by their header names, so their order is free; unknown columns are errors (a column
//! named `x_m` is called out as metres).

use super::{file_error, Ephemeris, EphemerisPoint, FileError};
use crate::state::StateVector;
use crate::time::Epoch;
use nalgebra::Vector3;
use std::path::Path;

/// One row of an observation or ephemeris CSV.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct CsvRecord {
    /// 1-based line in the file.
    pub line: usize,
    /// The epoch.
    pub epoch: Epoch,
    /// ECI position, km.
    pub r_km: Vector3<f64>,
    /// ECI velocity, km/s, if the file has the columns.
    pub v_km_s: Option<Vector3<f64>>,
    /// 1σ position uncertainty per axis, km, if the file has the column.
    pub sigma_km: Option<f64>,
}

const KNOWN: [&str; 8] = [
    "epoch_utc",
    "x_km",
    "y_km",
    "z_km",
    "vx_km_s",
    "vy_km_s",
    "vz_km_s",
    "sigma_km",
];

/// Parses the rows of a CSV (no order or plausibility checks: callers do those).
pub fn parse_records(text: &str, path: &Path) -> Result<Vec<CsvRecord>, FileError> {
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    let mut reader = ::csv::ReaderBuilder::new()
        .has_headers(false)
        .comment(Some(b'#'))
        .trim(::csv::Trim::All)
        .flexible(true)
        .from_reader(text.as_bytes());
    let mut rows = reader.records().filter_map(|r| match r {
        // A record of one empty field is a blank line.
        Ok(r) if r.len() == 1 && r[0].is_empty() => None,
        Ok(r) => {
            let line = r.position().map(|p| p.line() as usize).unwrap_or(0);
            Some(Ok((line, r)))
        }
        Err(e) => {
            let line = e.position().map(|p| p.line() as usize);
            Some(Err(file_error(path, line, format!("not valid CSV: {e}"))))
        }
    });
    let (hline, header) = rows
        .next()
        .transpose()?
        .ok_or_else(|| file_error(path, None, "the file is empty (a header line is required)"))?;
    let names: Vec<&str> = header.iter().collect();
    let col = columns(&names, path, hline)?;
    let mut out = Vec::new();
    for row in rows {
        let (ln, fields) = row?;
        if fields.len() != names.len() {
            return Err(file_error(
                path,
                Some(ln),
                format!("{} fields, the header has {}", fields.len(), names.len()),
            ));
        }
        out.push(record(&fields, &col, path, ln)?);
    }
    Ok(out)
}

/// The column of each known name (`usize::MAX`: absent), from the header `names` at line
/// `hline`: unknown or repeated names, missing positions or a partial velocity refused.
fn columns(names: &[&str], path: &Path, hline: usize) -> Result<[usize; 8], FileError> {
    let mut col = [usize::MAX; 8];
    for (i, n) in names.iter().enumerate() {
        match KNOWN.iter().position(|k| k == n) {
            Some(k) if col[k] == usize::MAX => col[k] = i,
            Some(_) => {
                return Err(file_error(
                    path,
                    Some(hline),
                    format!("column `{n}` appears twice"),
                ))
            }
            None => {
                let hint = if n.ends_with("_m") || n.ends_with("_m_s") {
                    " (this looks like metres: arcwise reads km and km/s)"
                } else {
                    ""
                };
                return Err(file_error(
                    path,
                    Some(hline),
                    format!("unknown column {n:?}{hint}; expected epoch_utc,x_km,y_km,z_km[,vx_km_s,vy_km_s,vz_km_s][,sigma_km]"),
                ));
            }
        }
    }
    for k in 0..4 {
        if col[k] == usize::MAX {
            return Err(file_error(
                path,
                Some(hline),
                format!("missing column `{}`", KNOWN[k]),
            ));
        }
    }
    let nv = (4..7).filter(|&k| col[k] != usize::MAX).count();
    if nv != 0 && nv != 3 {
        return Err(file_error(
            path,
            Some(hline),
            "give all three velocity columns or none",
        ));
    }
    Ok(col)
}

/// One data row at line `ln`, its fields in the columns `col`.
fn record(
    fields: &::csv::StringRecord,
    col: &[usize; 8],
    path: &Path,
    ln: usize,
) -> Result<CsvRecord, FileError> {
    let num = |k: usize| -> Result<f64, FileError> {
        let s = &fields[col[k]];
        let v: f64 = s.parse().map_err(|_| {
            file_error(
                path,
                Some(ln),
                format!("{}: {s:?} is not a number", KNOWN[k]),
            )
        })?;
        if !v.is_finite() {
            return Err(file_error(
                path,
                Some(ln),
                format!("{}: `{s}` is not finite", KNOWN[k]),
            ));
        }
        Ok(v)
    };
    let epoch = Epoch::parse_utc(&fields[col[0]])
        .map_err(|e| file_error(path, Some(ln), format!("epoch_utc: {e}")))?;
    let r_km = Vector3::new(num(1)?, num(2)?, num(3)?);
    let v_km_s = if col[4] != usize::MAX {
        Some(Vector3::new(num(4)?, num(5)?, num(6)?))
    } else {
        None
    };
    let sigma_km = if col[7] != usize::MAX {
        let s = num(7)?;
        if s <= 0.0 {
            return Err(file_error(
                path,
                Some(ln),
                format!("sigma_km: {s} must be positive"),
            ));
        }
        Some(s)
    } else {
        None
    };
    Ok(CsvRecord {
        line: ln,
        epoch,
        r_km,
        v_km_s,
        sigma_km,
    })
}

/// Parses a CSV ephemeris (velocities required). Returns the file line of each point.
pub fn parse_ephemeris(text: &str, path: &Path) -> Result<(Ephemeris, Vec<usize>), FileError> {
    let recs = parse_records(text, path)?;
    let mut eph = Ephemeris::default();
    let mut lines = Vec::with_capacity(recs.len());
    for r in recs {
        let v = r.v_km_s.ok_or_else(|| {
            file_error(
                path,
                Some(r.line),
                "an ephemeris needs the velocity columns vx_km_s,vy_km_s,vz_km_s",
            )
        })?;
        eph.points.push(EphemerisPoint {
            epoch: r.epoch,
            state: StateVector::new(r.r_km[0], r.r_km[1], r.r_km[2], v[0], v[1], v[2]),
        });
        lines.push(r.line);
    }
    Ok((eph, lines))
}

/// Formats an ephemeris as CSV (shortest round-trip numbers).
pub fn format_ephemeris(eph: &Ephemeris) -> String {
    let mut s = String::with_capacity(64 + eph.points.len() * 140);
    s.push_str("epoch_utc,x_km,y_km,z_km,vx_km_s,vy_km_s,vz_km_s\n");
    for p in &eph.points {
        let x = &p.state;
        s.push_str(&format!(
            "{},{},{},{},{},{},{}\n",
            p.epoch.to_utc_string(),
            x[0],
            x[1],
            x[2],
            x[3],
            x[4],
            x[5]
        ));
    }
    s
}
