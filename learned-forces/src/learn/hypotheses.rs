//! The maneuver-hypotheses file of `arcwise rank` (YAML): which hypotheses to test, with
//! their time windows in UTC, turned into [`Hypothesis`] values on the arc's time axis.
//!
//! ```yaml
//! hypotheses:
//!   - no_maneuver
//!   - impulsive: { from_utc: "2031-05-04T01:00:00Z", to_utc: "2031-05-04T23:00:00Z" }
//!   - finite_burn: { from_utc: "…", to_utc: "…", max_duration_s: 3600 }
//!   - continuous_along_track
//!   - thrust_from_epoch: { from_utc: "…", to_utc: "…" }
//! ```

use super::rank::Hypothesis;
use propagator::Epoch;
use serde::Deserialize;
use std::path::Path;

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct HypothesesFile {
    #[serde(with = "serde_yaml::with::singleton_map_recursive")]
    hypotheses: Vec<HypothesisSpec>,
}

#[derive(Deserialize)]
#[serde(rename_all = "snake_case", deny_unknown_fields)]
enum HypothesisSpec {
    NoManeuver,
    Impulsive {
        from_utc: String,
        to_utc: String,
    },
    FiniteBurn {
        from_utc: String,
        to_utc: String,
        max_duration_s: f64,
    },
    ContinuousAlongTrack,
    ThrustFromEpoch {
        from_utc: String,
        to_utc: String,
    },
}

/// Parses a hypotheses file for an arc that starts at `arc_start` and lasts
/// `arc_span_s` seconds. Windows are clipped to the arc; a window that lies wholly
/// outside it, or ends before it starts, is an error (it could only be skipped
/// silently). Errors start with `path`.
pub fn parse_hypotheses(
    text: &str,
    path: &Path,
    arc_start: &Epoch,
    arc_span_s: f64,
) -> Result<Vec<Hypothesis>, String> {
    let err = |m: String| format!("{}: {m}", path.display());
    if text.trim().is_empty() {
        return Err(err("the file is empty".into()));
    }
    let file: HypothesesFile = propagator::input::yaml_from_str(text).map_err(err)?;
    if file.hypotheses.is_empty() {
        return Err(err("no hypotheses".into()));
    }
    let window = |i: usize, from: &str, to: &str| -> Result<(f64, f64), String> {
        let at = |s: &str, key: &str| {
            Epoch::parse_utc(s)
                .map(|e| e.seconds_since(arc_start))
                .map_err(|e| err(format!("hypotheses[{i}].{key}: {e}")))
        };
        let (a, b) = (at(from, "from_utc")?, at(to, "to_utc")?);
        if b <= a {
            return Err(err(format!(
                "hypotheses[{i}]: to_utc {to} is not after from_utc {from}"
            )));
        }
        if b <= 0.0 || a >= arc_span_s {
            return Err(err(format!(
                "hypotheses[{i}]: the window {from} to {to} lies outside the arc"
            )));
        }
        Ok((a.max(0.0), b.min(arc_span_s)))
    };
    file.hypotheses
        .iter()
        .enumerate()
        .map(|(i, h)| {
            Ok(match h {
                HypothesisSpec::NoManeuver => Hypothesis::NoManeuver,
                HypothesisSpec::ContinuousAlongTrack => Hypothesis::ContinuousAlongTrack,
                HypothesisSpec::Impulsive { from_utc, to_utc } => {
                    let (from_s, to_s) = window(i, from_utc, to_utc)?;
                    Hypothesis::Impulsive { from_s, to_s }
                }
                HypothesisSpec::ThrustFromEpoch { from_utc, to_utc } => {
                    let (from_s, to_s) = window(i, from_utc, to_utc)?;
                    Hypothesis::ThrustFromEpoch { from_s, to_s }
                }
                HypothesisSpec::FiniteBurn {
                    from_utc,
                    to_utc,
                    max_duration_s,
                } => {
                    if !(max_duration_s.is_finite() && *max_duration_s > 0.0) {
                        return Err(err(format!(
                            "hypotheses[{i}].max_duration_s = {max_duration_s}: must be positive (s)"
                        )));
                    }
                    let (from_s, to_s) = window(i, from_utc, to_utc)?;
                    Hypothesis::FiniteBurn {
                        from_s,
                        to_s,
                        max_duration_s: *max_duration_s,
                    }
                }
            })
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn parse(text: &str) -> Result<Vec<Hypothesis>, String> {
        let t0 = Epoch::parse_utc("2031-05-04T00:00:00Z").unwrap();
        parse_hypotheses(text, Path::new("h.yaml"), &t0, 86400.0)
    }

    #[test]
    fn windows_are_seconds_from_the_arc_start_clipped_to_the_arc() {
        let h = parse("hypotheses:\n  - no_maneuver\n  - impulsive: { from_utc: \"2031-05-03T12:00:00Z\", to_utc: \"2031-05-04T06:00:00Z\" }\n  - finite_burn: { from_utc: \"2031-05-04T01:00:00Z\", to_utc: \"2031-05-04T02:00:00Z\", max_duration_s: 600 }\n").unwrap();
        assert_eq!(h[0], Hypothesis::NoManeuver);
        assert_eq!(
            h[1],
            Hypothesis::Impulsive {
                from_s: 0.0,
                to_s: 21600.0
            }
        );
        assert_eq!(
            h[2],
            Hypothesis::FiniteBurn {
                from_s: 3600.0,
                to_s: 7200.0,
                max_duration_s: 600.0
            }
        );
    }

    #[test]
    fn refusals_name_the_file_and_the_entry() {
        for (text, needle) in [
            ("", "empty"),
            ("hypotheses: []\n", "no hypotheses"),
            ("hypotheses: [teleport]\n", "unknown variant"),
            ("hypotheses:\n  - impulsive: { from_utc: \"2031-05-04T06:00:00Z\", to_utc: \"2031-05-04T01:00:00Z\" }\n", "hypotheses[0]: to_utc"),
            ("hypotheses:\n  - impulsive: { from_utc: \"2031-06-01T00:00:00Z\", to_utc: \"2031-06-02T00:00:00Z\" }\n", "outside the arc"),
            ("hypotheses:\n  - finite_burn: { from_utc: \"2031-05-04T01:00:00Z\", to_utc: \"2031-05-04T02:00:00Z\", max_duration_s: -1 }\n", "max_duration_s"),
            ("hypotheses:\n  - impulsive: { from_utc: \"yesterday\", to_utc: \"2031-05-04T02:00:00Z\" }\n", "hypotheses[0].from_utc"),
            ("hypotheses:\n  - impulsive: { from_utc: \"2031-05-04T01:00:00Z\", to_utc: \"2031-05-04T02:00:00Z\", dv: 3 }\n", "unknown field"),
        ] {
            let e = parse(text).unwrap_err();
            assert!(e.starts_with("h.yaml: ") && e.contains(needle), "{text:?}: {e}");
        }
    }
}
