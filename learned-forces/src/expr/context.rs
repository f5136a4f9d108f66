//! What the terminals read besides the state: the Earth's constants, the Sun's clock, the
//! known model's atmosphere and altitude ([`Context`]), the host's own density where the
//! formula's `rho` is NRLMSISE-00 ([`HostDensity`]), and the terminal values at one point
//! ([`Terminals`]).

use super::compiled;
use super::num::{Dual, Num, V3};
use propagator::solar_system::CenturyClock;
use propagator::StateVector;
use std::fmt;

/// The host model's drag density, for a `Density::Host` environment: the learned
/// formula's `rho` is then the very density the host's drag uses (NRLMSISE-00), on the
/// formula's time axis.
#[derive(Clone)]
pub struct HostDensity(pub std::sync::Arc<propagator::force::drag::Drag>);

impl HostDensity {
    /// `rho` at formula time `t` and ECI position `r`, with exact first derivatives in
    /// `r` as far as the host's gradient goes; NaN where the host has no density (the
    /// host's own drag then fails with the reason).
    fn rho<N: Num>(&self, t: f64, r: [N; 3]) -> N {
        let rv = nalgebra::Vector3::new(r[0].val(), r[1].val(), r[2].val());
        // The gradient costs a second model call: only numbers with derivatives need it.
        if !N::DERIVATIVES {
            return N::cst(self.0.density(t, &rv).unwrap_or(f64::NAN));
        }
        match self.0.density_and_gradient(t, &rv) {
            Ok((rho, g)) => crate::codegen::runtime::host_rho(rho, [g[0], g[1], g[2]], r),
            Err(_) => N::cst(f64::NAN),
        }
    }
}

impl HostDensity {
    /// The drag density of `forces` (read from `forces_path`) on a time axis whose zero
    /// is `epoch` (the formula's).
    pub fn of_model(
        forces: &propagator::config::ForcesFile,
        forces_path: &std::path::Path,
        epoch: &propagator::Epoch,
    ) -> Result<Self, String> {
        let drag = forces
            .drag
            .as_ref()
            .ok_or(
                "the learned force reads the host's drag density, but the forces file has no drag",
            )?
            .build(
                &forces.central_body,
                forces_path,
                epoch,
                forces.earth_orientation.as_ref(),
            )?;
        Ok(HostDensity(std::sync::Arc::new(drag)))
    }
}

impl fmt::Debug for HostDensity {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "HostDensity({})", self.0.atmosphere.name())
    }
}

impl PartialEq for HostDensity {
    fn eq(&self, other: &Self) -> bool {
        std::sync::Arc::ptr_eq(&self.0, &other.0)
    }
}

/// Constants the terminals need.
#[derive(Clone, Debug, PartialEq)]
pub struct Context {
    /// Earth radius (altitude, shadow), km.
    pub radius_km: f64,
    /// Earth rotation (co-rotating atmosphere), rad/s.
    pub rotation_rad_s: f64,
    /// Maps `t` to the Sun series' time argument.
    pub clock: CenturyClock,
    /// What `rho` and `h` mean: the known model's atmosphere and altitude.
    pub environment: Environment,
    /// The host's drag density when `environment.density` is `Density::Host`.
    pub host: Option<HostDensity>,
}

/// The atmosphere and altitude the `rho` and `h` terminals read (the plugin runtime's
/// type, so a plugin computes them with the same code).
pub use crate::codegen::runtime::{Altitude, Density, Env as Environment, HANDBOOK_ENV};

impl Context {
    /// The terminals of the known model `forces` on a time axis starting at `epoch`: its
    /// Earth radius and rotation, and the atmosphere and altitude of its drag (the
    /// handbook table and spherical altitude when it has no drag). An atmosphere the
    /// plugin runtime cannot compute is an error: a formula's `rho` would silently
    /// differ from the host's.
    pub fn of_model(
        forces: &propagator::config::ForcesFile,
        forces_path: &std::path::Path,
        epoch: &propagator::Epoch,
    ) -> Result<Self, String> {
        use propagator::config::{AltitudeKey, AtmosphereSpec};
        let body = &forces.central_body;
        let mut host = None;
        let environment = match &forces.drag {
            None => HANDBOOK_ENV,
            Some(d) => Environment {
                density: match &d.atmosphere {
                    AtmosphereSpec::Table => Density::Table,
                    AtmosphereSpec::Ussa1976 => Density::Ussa1976,
                    AtmosphereSpec::Exponential(e) => Density::Exponential {
                        rho0_kg_m3: e.rho0_kg_m3,
                        h0_km: e.h0_km,
                        scale_height_km: e.scale_height_km,
                    },
                    AtmosphereSpec::Nrlmsise00(_) => {
                        host = Some(HostDensity::of_model(forces, forces_path, epoch)?);
                        Density::Host
                    }
                },
                altitude: match d.altitude {
                    AltitudeKey::Spherical => Altitude::Spherical,
                    AltitudeKey::Geodetic => Altitude::Geodetic {
                        flattening: body.flattening,
                    },
                },
            },
        };
        Ok(Self {
            radius_km: body.radius_km,
            rotation_rad_s: body.rotation_rad_s,
            clock: CenturyClock::new(epoch),
            environment,
            host,
        })
    }

    /// The switching functions of the `lit` terminal (the conical shadow's boundaries,
    /// see [`propagator::force::Force::switching`]) at `t` (s on the formula's axis) and
    /// state `x`, appended to `out`: a formula reading `lit` has the shadow's kinks.
    pub fn shadow_switching(&self, t: f64, x: &StateVector, out: &mut Vec<f64>) {
        let s = crate::codegen::runtime::sun_km(self.clock.centuries(t));
        propagator::force::srp::shadow_boundaries(
            &nalgebra::Vector3::new(x[0], x[1], x[2]),
            &nalgebra::Vector3::new(s[0], s[1], s[2]),
            self.radius_km,
            propagator::force::srp::Shadow::Conical,
            out,
        );
    }
}

/// All terminal values at one point, computed once and shared by every node. This is the
/// plugin runtime's own type: the library and every generated plugin compute terminals
/// with one implementation.
pub use crate::codegen::runtime::P as Terminals;

impl<N: Num> Terminals<N> {
    /// Terminals at time `t` (s) and position/velocity given as numbers of type `N`.
    pub fn new(t: f64, r: V3<N>, v: V3<N>, ctx: &Context) -> Self {
        Self::with_sun(t, r, v, ctx, true, true)
    }

    /// As [`Terminals::new`], skipping the Sun series (`sun`) and the shadow (`lit`)
    /// when the formulas do not use them (they are then left at zero and one).
    pub fn with_sun(
        t: f64,
        r: V3<N>,
        v: V3<N>,
        ctx: &Context,
        need_sun: bool,
        need_lit: bool,
    ) -> Self {
        let needs = compiled::Needs {
            rtn: true,
            arglat: true,
            density: true,
            altitude: true,
            vrel: true,
            sun: need_sun,
            lit: need_lit,
        };
        Self::with_needs(t, r, v, ctx, &needs)
    }

    /// Computes only the terminals in `needs` (the others are left at zero, `lit` at one).
    pub fn with_needs(t: f64, r: V3<N>, v: V3<N>, ctx: &Context, needs: &compiled::Needs) -> Self {
        let need = crate::codegen::runtime::Need {
            rtn: needs.rtn,
            u: needs.arglat,
            rho: needs.density,
            sun: needs.sun,
            lit: needs.lit,
        };
        let mut p = crate::codegen::runtime::terminals_for(
            t,
            r,
            v,
            ctx.radius_km,
            ctx.rotation_rad_s,
            ctx.clock.t0_centuries,
            need,
            &ctx.environment,
        );
        if needs.density && ctx.environment.density == Density::Host {
            p.rho = match &ctx.host {
                Some(host) => host.rho(t, p.r),
                None => N::cst(f64::NAN),
            };
        }
        p
    }
}

impl Terminals<f64> {
    /// Plain-number terminals of a state.
    pub fn of_state(t: f64, x: &StateVector, ctx: &Context) -> Self {
        Terminals::new(t, [x[0], x[1], x[2]], [x[3], x[4], x[5]], ctx)
    }
}

impl Terminals<Dual> {
    /// Terminals carrying derivatives with respect to the state.
    pub fn of_state_dual(t: f64, x: &StateVector, ctx: &Context) -> Self {
        let d = |k: usize| Dual::var(x[k], k);
        Terminals::new(t, [d(0), d(1), d(2)], [d(3), d(4), d(5)], ctx)
    }
}
