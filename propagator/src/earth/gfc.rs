//! ICGEM `.gfc` gravity-field files (the International Centre for Global Earth Models'
//! open exchange format): a header of `keyword value` lines closed by `end_of_head`, then
//! `gfc n m C̄nm S̄nm [σC σS]` lines of fully normalized coefficients.
//!
//! Read: `earth_gravity_constant` (m³/s²), `radius` (m), `max_degree`, `norm`
//! (`fully_normalized` only), `tide_system` (kept for the report), `modelname`. Refused with
//! the keyword named: time-variable terms (`gfct`, `trnd`, `acos`, `asin`), another
//! normalization, a coefficient beyond `max_degree` or given twice, non-finite numbers.

use super::gravity::GravityField;

/// The highest degree read (EGM2008's full degree; 2.4 million coefficient pairs, 38 MB):
/// a header claiming more is refused before anything is allocated.
pub const MAX_DEGREE: usize = 2190;
use std::path::Path;

/// Reads a `.gfc` file up to degree `degree` (all of it when `None`).
pub fn read(path: &Path, degree: Option<usize>) -> Result<GravityField, String> {
    let text =
        crate::input::read_text(path, crate::input::MAX_DATA_BYTES).map_err(|e| e.to_string())?;
    parse(&text, &path.display().to_string(), degree)
}

/// Parses `.gfc` text from `origin` (for messages) up to degree `degree`.
pub fn parse(text: &str, origin: &str, degree: Option<usize>) -> Result<GravityField, String> {
    let mut lines = text.lines().enumerate();
    let (mut gm, mut radius, mut max_degree, mut norm) = (None, None, None, None);
    let (mut name, mut tide) = (String::from("unnamed"), String::from("unknown"));
    let mut closed = false;
    for (i, line) in lines.by_ref() {
        let at = |e: String| format!("{origin}:{}: {e}", i + 1);
        let mut f = line.split_whitespace();
        let Some(key) = f.next() else { continue };
        let value = f.next().unwrap_or("");
        match key {
            "end_of_head" => {
                closed = true;
                break;
            }
            "earth_gravity_constant" => gm = Some(positive(value, key).map_err(at)?),
            "radius" => radius = Some(positive(value, key).map_err(at)?),
            "max_degree" => {
                max_degree = Some(
                    value
                        .parse::<usize>()
                        .map_err(|_| at(format!("max_degree `{value}` is not a whole number")))?,
                )
            }
            "norm" => norm = Some(value.to_string()),
            "modelname" => name = crate::text::sanitized(value),
            "tide_system" => tide = crate::text::sanitized(value),
            _ => {}
        }
    }
    if !closed {
        return Err(format!(
            "{origin}: no `end_of_head` line: not an ICGEM .gfc file, or truncated in its header"
        ));
    }
    let need = |v: Option<f64>, k: &str| v.ok_or_else(|| format!("{origin}: header has no `{k}`"));
    let (gm, radius) = (need(gm, "earth_gravity_constant")?, need(radius, "radius")?);
    let max_degree = max_degree.ok_or_else(|| format!("{origin}: header has no `max_degree`"))?;
    if max_degree > MAX_DEGREE {
        return Err(format!(
            "{origin}: max_degree {max_degree} is beyond {MAX_DEGREE} (EGM2008's full degree), the most arcwise reads"
        ));
    }
    match norm.as_deref() {
        Some("fully_normalized") | None => {}
        Some(other) => {
            return Err(format!(
                "{origin}: norm `{}` is not supported (fully_normalized only)",
                crate::text::sanitized(other)
            ))
        }
    }
    let n_max = degree.unwrap_or(max_degree);
    if n_max > max_degree {
        return Err(format!(
            "{origin}: degree {n_max} asked for, the file goes to {max_degree}"
        ));
    }
    let mut field = GravityField::zero(
        format!("{name} ({origin}, tide system {tide})"),
        gm * 1e-9,
        radius * 1e-3,
        n_max,
    );
    field.tide_system = tide;
    let mut seen = vec![false; (max_degree + 1) * (max_degree + 2) / 2];
    for (i, line) in lines {
        let at = |e: String| format!("{origin}:{}: {e}", i + 1);
        let f: Vec<&str> = line.split_whitespace().collect();
        let Some(&key) = f.first() else { continue };
        match key {
            "gfc" => {}
            "gfct" | "trnd" | "acos" | "asin" => {
                return Err(at(format!(
                    "`{key}` (time-variable) terms are not supported: give a static field"
                )))
            }
            other => {
                return Err(at(format!(
                    "`{}` where a `gfc` line is expected",
                    crate::text::sanitized(other)
                )))
            }
        }
        if f.len() < 5 {
            return Err(at(format!("{} fields, `gfc n m C S` expected", f.len())));
        }
        let whole = |s: &str, what: &str| {
            s.parse::<usize>()
                .map_err(|_| at(format!("{what} `{s}` is not a whole number")))
        };
        let (n, m) = (whole(f[1], "degree")?, whole(f[2], "order")?);
        if m > n || n > max_degree {
            return Err(at(format!(
                "degree {n} order {m} is outside the file's max_degree {max_degree} (or m > n)"
            )));
        }
        let idx = n * (n + 1) / 2 + m;
        if std::mem::replace(&mut seen[idx], true) {
            return Err(at(format!("degree {n} order {m} given twice")));
        }
        let c = finite(f[3], "C").map_err(at)?;
        let s = finite(f[4], "S").map_err(at)?;
        if n <= n_max {
            field.set(n, m, c, s);
        }
    }
    if let Some(missing) = (0..=n_max)
        .flat_map(|n| (0..=n).map(move |m| (n, m)))
        .find(|&(n, m)| !seen[n * (n + 1) / 2 + m] && n >= 2)
    {
        return Err(format!(
            "{origin}: no coefficient for degree {} order {} (file truncated?)",
            missing.0, missing.1
        ));
    }
    Ok(field)
}

fn positive(v: &str, key: &str) -> Result<f64, String> {
    match v.parse::<f64>() {
        Ok(x) if x.is_finite() && x > 0.0 => Ok(x),
        _ => Err(format!(
            "{key} `{}` is not a positive number",
            crate::text::sanitized(v)
        )),
    }
}

fn finite(v: &str, what: &str) -> Result<f64, String> {
    // ICGEM files may write exponents with D (Fortran).
    let t = v.replace(['D', 'd'], "e");
    match t.parse::<f64>() {
        Ok(x) if x.is_finite() && x.abs() < 1.0 + 1e-12 => Ok(x),
        Ok(x) if x.is_finite() => Err(format!("{what} = {x}: a normalized coefficient is below 1")),
        _ => Err(format!(
            "{what} `{}` is not a finite number",
            crate::text::sanitized(v)
        )),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_huge_max_degree_is_refused_before_allocating() {
        // 100000 would ask for 5e9 coefficient slots (40 GB) before reading a line.
        let text = "begin_of_head\nearth_gravity_constant 3.986004415E+14\nradius 6378136.3\nmax_degree 100000\nnorm fully_normalized\nend_of_head\ngfc 0 0 1.0 0.0\n";
        let e = parse(text, "big.gfc", Some(100_000)).unwrap_err();
        assert!(e.contains("big.gfc") && e.contains("100000"), "{e}");
    }
}
