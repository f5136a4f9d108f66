//! What each observation contributes to the stacked residual: its scalar rows, each a
//! weighted residual (observed − computed)/σ, the partials of the computed value with
//! respect to the GCRF state at the observation's epoch, and σ. A state observation
//! gives 3 or 6 rows; a tracking measurement one, through its site's measurement model.

use crate::arc::{Arc, Observed};
use propagator::earth::EarthRotation;
use propagator::tracking::measurement::{self, Kind};
use propagator::StateVector;

/// One scalar row.
#[derive(Clone, Copy, Debug)]
pub struct Row {
    /// (observed − computed) / σ.
    pub z: f64,
    /// ∂computed/∂x (x the GCRF state at the epoch), unweighted.
    pub h: [f64; 6],
    /// σ, the row's weight is 1/σ (divided after the chain rule, so a position row's
    /// Jacobian is Φ's row / σ to the last bit).
    pub sigma: f64,
    /// The series the row belongs to for editing and structure tests (`None`: neither,
    /// as observed velocities).
    pub channel: Option<usize>,
}

/// The Earth's μ (km³/s²) of the measurements' light-time track and of the initial orbit:
/// both need the central body's gravity only to second order over seconds or as a start.
pub(crate) const MU_KM3_S2: f64 = propagator::CentralBody::EARTH_EGM96.mu_km3_s2;

/// The observation model of an arc: what the rows need besides the states.
pub(crate) struct Observing<'a> {
    arc: &'a Arc,
    /// The Earth's rotation at each tracking observation's epoch.
    rotations: Vec<Option<EarthRotation>>,
}

/// Channels of a state arc: the position axes (x, y, z).
const STATE_CHANNELS: usize = 3;

impl<'a> Observing<'a> {
    /// The model of `arc`.
    pub(crate) fn new(arc: &'a Arc) -> Observing<'a> {
        // Measurements that share an epoch (a radar's range and angles) share its rotation.
        let mut last: Option<(propagator::Epoch, EarthRotation)> = None;
        let rotations = arc
            .observations
            .iter()
            .map(|o| {
                let t = arc.tracking.as_ref()?;
                o.as_tracked()?;
                let rotation = match last {
                    Some((e, r)) if e == o.epoch => r,
                    _ => t.earth.at(o.epoch.tt_seconds_since_j2000()),
                };
                last = Some((o.epoch, rotation));
                Some(rotation)
            })
            .collect();
        Observing { arc, rotations }
    }

    /// How many rows observation `i` gives.
    pub(crate) fn count(&self, i: usize) -> usize {
        match &self.arc.observations[i].observed {
            Observed::State(s) if s.v_km_s.is_some() => 6,
            Observed::State(_) => 3,
            Observed::Tracking(_) => 1,
        }
    }

    /// Number of channels (editing and structure series).
    pub(crate) fn channels(&self) -> usize {
        match &self.arc.tracking {
            Some(t) => t.sites.len() * Kind::TABLE.len(),
            None => STATE_CHANNELS,
        }
    }

    /// Observation `i`'s rows at its state `x`, appended to `out`.
    pub(crate) fn rows(&self, i: usize, x: &StateVector, out: &mut Vec<Row>) -> Result<(), String> {
        let o = &self.arc.observations[i];
        match &o.observed {
            Observed::State(s) => {
                for c in 0..self.count(i) {
                    let (obs, sig) = if c < 3 {
                        (s.r_km[c], s.sigma_km)
                    } else {
                        (s.v_km_s.unwrap_or_default()[c - 3], s.sigma_km_s)
                    };
                    let mut h = [0.0; 6];
                    h[c] = 1.0;
                    out.push(Row {
                        z: (obs - x[c]) / sig,
                        h,
                        sigma: sig,
                        channel: (c < 3).then_some(c),
                    });
                }
            }
            Observed::Tracking(m) => {
                let (Some(t), Some(rot)) = (&self.arc.tracking, &self.rotations[i]) else {
                    return Err("internal: a measurement without its sites".into());
                };
                let site = &t.sites[m.site].site;
                let model = measurement::model(m.kind, m.tag, site, x, MU_KM3_S2, rot)?;
                let d = measurement::residual(m.kind, m.value - m.bias, model.value);
                let sigma = m.sigma * model.sigma_scale;
                out.push(Row {
                    z: d / sigma,
                    h: model.partials,
                    sigma,
                    channel: Some(channel(m.site, m.kind)),
                });
            }
        }
        Ok(())
    }

    /// The name of a channel in reports (`R`/`T`/`N` are the structure tests' names for
    /// state arcs; the channels here name the tracking series).
    pub(crate) fn channel_name(&self, c: usize) -> String {
        match &self.arc.tracking {
            Some(t) => {
                let (site, kind) = (c / Kind::TABLE.len(), Kind::TABLE[c % Kind::TABLE.len()]);
                format!("{} {}", t.sites[site].site.name, kind.word)
            }
            None => ["x", "y", "z"][c.min(2)].to_string(),
        }
    }
}

/// The channel of a measurement: one per site and kind.
pub(crate) fn channel(site: usize, kind: Kind) -> usize {
    site * Kind::TABLE.len() + Kind::TABLE.iter().position(|i| i.kind == kind).unwrap_or(0)
}
