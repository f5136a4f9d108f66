//! An example arcwise force plugin: the invented "SKYLARK" drag sail.
//!
//! A small satellite deploys a sail at a known time; its drag area grows from the stowed
//! value to the full sail with a time constant, in a single-exponential atmosphere that
//! co-rotates with the Earth. The same [`DragSail`] is usable compiled in (this crate as
//! an rlib) and as a native plugin (the cdylib, through
//! [`propagator::export_force_plugin!`]).

use nalgebra::Vector3;
use propagator::force::drag::DRAG_UNIT_FACTOR;
use propagator::force::{Force, ForceError};
use propagator::plugin::{Metadata, Units, ABI_VERSION};
use propagator::StateVector;

/// The plugin's reference epoch: `t_s = 0` here.
pub const REFERENCE_EPOCH_UTC: &str = "2031-05-04T12:00:00.000Z";

/// Drag on a deploying sail.
#[derive(Clone, Debug, PartialEq)]
pub struct DragSail {
    /// Drag coefficient, dimensionless.
    pub cd: f64,
    /// Area before deployment, m².
    pub stowed_area_m2: f64,
    /// Area when fully deployed, m².
    pub sail_area_m2: f64,
    /// Mass, kg.
    pub mass_kg: f64,
    /// Deployment starts at this `t_s`, s.
    pub deploy_start_s: f64,
    /// Deployment time constant, s.
    pub deploy_tau_s: f64,
    /// Density at `h0_km`, kg/m³.
    pub rho0_kg_m3: f64,
    /// Base altitude of the exponential atmosphere, km.
    pub h0_km: f64,
    /// Scale height, km.
    pub scale_height_km: f64,
    /// Earth radius for the altitude, km.
    pub earth_radius_km: f64,
    /// Earth rotation rate, rad/s.
    pub rotation_rad_s: f64,
}

impl Default for DragSail {
    fn default() -> Self {
        Self {
            cd: 2.2,
            stowed_area_m2: 0.05,
            sail_area_m2: 4.0,
            mass_kg: 12.0,
            deploy_start_s: 6.0 * 3600.0,
            deploy_tau_s: 2.0 * 3600.0,
            rho0_kg_m3: 6.967e-13,
            h0_km: 500.0,
            scale_height_km: 63.822,
            earth_radius_km: 6378.1363,
            rotation_rad_s: 7.292115e-5,
        }
    }
}

impl DragSail {
    /// Drag area at `t_s`, m².
    pub fn area_m2(&self, t_s: f64) -> f64 {
        if t_s <= self.deploy_start_s {
            self.stowed_area_m2
        } else {
            let grown = 1.0 - (-(t_s - self.deploy_start_s) / self.deploy_tau_s).exp();
            self.stowed_area_m2 + (self.sail_area_m2 - self.stowed_area_m2) * grown
        }
    }
}

impl Force for DragSail {
    fn name(&self) -> &str {
        "skylark_drag_sail"
    }

    fn acceleration(&self, t_s: f64, x: &StateVector) -> Result<Vector3<f64>, ForceError> {
        let r = (x[0] * x[0] + x[1] * x[1] + x[2] * x[2]).sqrt();
        let rho = self.rho0_kg_m3
            * (-(r - self.earth_radius_km - self.h0_km) / self.scale_height_km).exp();
        let w = self.rotation_rad_s;
        let vr = Vector3::new(x[3] + w * x[1], x[4] - w * x[0], x[5]);
        let k =
            0.5 * self.cd * self.area_m2(t_s) / self.mass_kg * rho * vr.norm() * DRAG_UNIT_FACTOR;
        Ok(vr * -k)
    }
}

/// The plugin's metadata.
pub fn metadata() -> Metadata {
    Metadata {
        abi_version: ABI_VERSION,
        name: "skylark_drag_sail".into(),
        frame: "ECI".into(),
        reference_epoch_utc: REFERENCE_EPOCH_UTC.into(),
        source_checksum: None,
        validity: None,
        units: Units::default(),
        host_density: None,
    }
}

propagator::export_force_plugin!(DragSail, DragSail::default(), metadata());
