//! Spherical-harmonic gravity of the real Earth: the field (degrees ≥ 2) evaluated in ITRF
//! and rotated to GCRF through the IAU 2006/2000A chain with Earth-orientation data.

use super::{Force, ForceError};
use crate::earth::{EarthOrientation, Harmonics, SolidTides};
use crate::solar_system::{Body, CenturyClock};
use crate::state::StateVector;
use nalgebra::{Matrix3x6, Vector3};

/// The Earth's field to degree n and order m in the GCRF equations of motion.
#[derive(Clone, Debug)]
pub struct FieldGravity {
    harmonics: Harmonics,
    earth: EarthOrientation,
    /// TT seconds since J2000.0 at t_s = 0 of the model's time axis.
    tt0_s: f64,
    name: String,
    /// Solid Earth tides raised by the Sun and Moon (their series on this clock).
    tides: Option<(SolidTides, CenturyClock)>,
}

impl FieldGravity {
    /// `harmonics` oriented by `earth`, on a time axis whose zero is `tt0_s` (TT seconds
    /// since J2000.0).
    pub fn new(harmonics: Harmonics, earth: EarthOrientation, tt0_s: f64) -> Self {
        let (n, m) = harmonics.size();
        Self {
            name: format!("gravity_field_{n}x{m}"),
            harmonics,
            earth,
            tt0_s,
            tides: None,
        }
    }

    /// With solid Earth tides on the degree-2 coefficients, the Sun and Moon taken from
    /// their series on `clock` (the model's time axis).
    pub fn with_solid_tides(mut self, tides: SolidTides, clock: CenturyClock) -> Self {
        self.name.push_str("_solid_tides");
        self.tides = Some((tides, clock));
        self
    }

    /// The field evaluated.
    pub fn harmonics(&self) -> &Harmonics {
        &self.harmonics
    }
}

impl Force for FieldGravity {
    fn name(&self) -> &str {
        &self.name
    }

    fn acceleration(&self, t_s: f64, x: &StateVector) -> Result<Vector3<f64>, ForceError> {
        let m = self.earth.at(self.tt0_s + t_s).gcrf_to_itrf();
        let r = m * Vector3::new(x[0], x[1], x[2]);
        let mut a = self.harmonics.acceleration(&r);
        if let Some((tides, clock)) = &self.tides {
            let t_c = clock.centuries(t_s);
            let bodies = [Body::Sun, Body::Moon].map(|b| (m * b.position_km(t_c), b.mu_km3_s2()));
            a += tides.acceleration(&r, &bodies);
        }
        Ok(m.transpose() * a)
    }

    fn partials(&self, t_s: f64, x: &StateVector) -> Result<Matrix3x6<f64>, ForceError> {
        // One rotation and one recursion serve the whole gradient (analytic, from the
        // same weights as the acceleration, in `Harmonics`).
        let m = self.earth.at(self.tt0_s + t_s).gcrf_to_itrf();
        let r = m * Vector3::new(x[0], x[1], x[2]);
        let g = m.transpose() * self.harmonics.gradient(&r) * m;
        let mut p = Matrix3x6::zeros();
        p.fixed_view_mut::<3, 3>(0, 0).copy_from(&g);
        Ok(p)
    }

    fn depends_on_velocity(&self) -> bool {
        false
    }
}
