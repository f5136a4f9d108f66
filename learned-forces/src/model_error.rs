//! The known model's own error, stated: a position floor added in quadrature to every
//! observation's σ, so that the anomaly verdict speaks about forces beyond the model's
//! known limits (tides, albedo, a cannonball SRP, an atmosphere's own errors), not about
//! those limits.
//!
//! Default, for a real-data model (a full gravity field): an unmodelled acceleration
//! level a = Σ (relative uncertainty × |acceleration|) over the model's forces at the
//! arc's start, plus the field's omission (degrees above the one used, from the shipped
//! EGM2008), turned into a position floor a·T²/8 over the arc's span T (the largest
//! deviation of a constant-acceleration parabola from the straight line the initial state
//! absorbs; a rule of thumb, common practice). Relative uncertainties (from memory, orders
//! of magnitude): drag 10 % (scale estimated or not: day–night and storm variations),
//! cannonball SRP 10 %, analytic Sun and Moon series 0.1 %, the rest 0.
//!
//! The simple zonal model is the simulated world's known model, exact by construction:
//! no floor by default. `--model-error-km` overrides either way.

use crate::arc::Arc;
use nalgebra::Vector3;
use propagator::config::LoadedForces;
use propagator::earth::{GravityField, Harmonics};
use propagator::StateVector;

/// The floor in use and where it came from.
#[derive(Clone, Debug, PartialEq)]
pub struct ModelError {
    /// Position floor added in quadrature to each σ, km.
    pub floor_km: f64,
    /// The unmodelled acceleration level it stands for, km/s² (None when given directly).
    pub acceleration_km_s2: Option<f64>,
    /// How it was set, for the report.
    pub basis: String,
}

/// Relative uncertainty of a force by name (see the module text).
fn relative_uncertainty(f: &dyn propagator::Force) -> f64 {
    if f.scale().is_some() {
        // Drag and SRP: the forces whose size a fit may scale.
        0.1
    } else if f.name().starts_with("third_body") {
        1e-3
    } else {
        0.0
    }
}

/// The default floor for `arc` under `loaded` (see the module text).
pub fn default_for(arc: &Arc, loaded: &LoadedForces) -> ModelError {
    let gravity = &loaded.spec.gravity;
    if gravity.field.is_none() {
        return ModelError {
            floor_km: 0.0,
            acceleration_km_s2: None,
            basis: "none: the zonal model is the simulated world's known model".into(),
        };
    }
    let obs = &arc.observations;
    let (Some(first), Some(last)) = (obs.first(), obs.last()) else {
        return ModelError {
            floor_km: 0.0,
            acceleration_km_s2: None,
            basis: "none: empty arc".into(),
        };
    };
    let (Some(s0), false) = (first.as_state(), arc.tracking.is_some()) else {
        return ModelError {
            floor_km: 0.0,
            acceleration_km_s2: None,
            basis: "none: a tracking arc (the floor is a position σ; the sites file gives each measurement's σ)".into(),
        };
    };
    let r = s0.r_km;
    let v = s0
        .v_km_s
        .unwrap_or_else(|| match obs.get(1).and_then(|o| Some((o, o.as_state()?))) {
            Some((o, s1)) => (s1.r_km - r) / o.epoch.seconds_since(&first.epoch).max(1e-3),
            None => Vector3::zeros(),
        });
    let x = StateVector::new(r[0], r[1], r[2], v[0], v[1], v[2]);
    let mut a = 0.0;
    for f in loaded.model.forces() {
        let k = relative_uncertainty(f.as_ref());
        if k > 0.0 {
            if let Ok(acc) = f.acceleration(0.0, &x) {
                a += k * acc.norm();
            }
        }
    }
    // Omission: the shipped EGM2008 above the degree used (rotation left out: the size is
    // what matters, and it is nearly the same in any frame).
    let used = gravity.degree.unwrap_or(2);
    if let Ok(field) = GravityField::egm2008() {
        let top = field.max_degree;
        if used < top {
            if let (Ok(hi), Ok(lo)) = (
                Harmonics::new(field.clone(), top, top),
                Harmonics::new(field, used, gravity.order.unwrap_or(used)),
            ) {
                a += (hi.acceleration(&r) - lo.acceleration(&r)).norm();
            }
        }
    }
    let span = last.epoch.seconds_since(&first.epoch);
    let floor_km = a * span * span / 8.0;
    ModelError {
        floor_km,
        acceleration_km_s2: Some(a),
        basis: format!(
            "default for a real-Earth model: unmodelled acceleration {a:.2e} km/s² (drag and SRP 10 %, Sun and Moon 0.1 %, field above degree {used}) over {span:.0} s, floor a·T²/8"
        ),
    }
}

/// The floor given on the command line.
pub fn given(floor_km: f64) -> ModelError {
    ModelError {
        floor_km,
        acceleration_km_s2: None,
        basis: "given with --model-error-km".into(),
    }
}

/// Adds the floor in quadrature to every observation's position σ.
pub fn apply(arc: &mut Arc, e: &ModelError) {
    if e.floor_km > 0.0 {
        for o in &mut arc.observations {
            if let crate::arc::Observed::State(s) = &mut o.observed {
                s.sigma_km = s.sigma_km.hypot(e.floor_km);
            }
        }
    }
}
