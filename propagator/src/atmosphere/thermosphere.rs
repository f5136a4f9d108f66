//! NRLMSISE-00 as drag's atmosphere: the model's inputs from the propagator's state.
//!
//! Geodetic latitude, longitude and height on WGS-84 from the ITRF position (the Earth
//! orientation the force model uses), UTC day of year and time of day, the local
//! apparent solar time from the Sun's direction in the ITRF (the hour angle of the
//! Sun from the series in [`crate::solar_system`]), and the space weather at that epoch.

use nalgebra::Vector3;

use super::nrlmsise00::{nrlmsise00, MsisInput};
use super::space_weather::{day_of_year, SpaceWeather};
use super::{ellipsoid_height_in, Atmosphere};
use crate::earth::EarthOrientation;
use crate::solar_system::{sun_position_km, CenturyClock};
use crate::time::{Epoch, TimeAxis};

/// WGS-84 equatorial radius, km, and flattening (NIMA TR8350.2): the model's geodetic
/// coordinates are on this ellipsoid whatever the central body's constants.
pub const WGS84_A_KM: f64 = 6378.137;
/// WGS-84 flattening.
pub const WGS84_F: f64 = 1.0 / 298.257_223_563;

/// NRLMSISE-00 density along an orbit.
#[derive(Clone)]
pub struct Thermosphere {
    /// F10.7 and Ap.
    pub weather: SpaceWeather,
    /// Identifies this model (and its clones, which compute the same) in the cache.
    id: u64,
    earth: EarthOrientation,
    axis: TimeAxis,
    tt0_s: f64,
    clock: CenturyClock,
}

impl Thermosphere {
    /// The model on a time axis starting at `reference`, oriented by `earth`.
    pub fn new(weather: SpaceWeather, earth: EarthOrientation, reference: Epoch) -> Self {
        static NEXT_ID: std::sync::atomic::AtomicU64 = std::sync::atomic::AtomicU64::new(0);
        Thermosphere {
            weather,
            id: NEXT_ID.fetch_add(1, std::sync::atomic::Ordering::Relaxed),
            earth,
            axis: TimeAxis::new(reference),
            tt0_s: reference.tt_seconds_since_j2000(),
            clock: CenturyClock::new(&reference),
        }
    }

    /// The model's input at `t_s` (s on the axis) and GCRF position `r_km`.
    pub fn input(&self, t_s: f64, r_km: &Vector3<f64>) -> Result<MsisInput, String> {
        self.input_and_vertical(t_s, r_km).map(|(input, _)| input)
    }

    /// The model's input, and the local vertical (the ellipsoid normal) in GCRF.
    fn input_and_vertical(
        &self,
        t_s: f64,
        r_km: &Vector3<f64>,
    ) -> Result<(MsisInput, Vector3<f64>), String> {
        let to_itrf = self.earth.at(self.tt0_s + t_s).gcrf_to_itrf();
        let r = to_itrf * r_km;
        // Two of Bowring's steps: < 1e-12 rad and µm below 1000 km.
        let (h, normal) = ellipsoid_height_in([r[0], r[1], r[2]], WGS84_A_KM, WGS84_F, 2);
        let vertical = to_itrf.transpose() * Vector3::from(normal);
        let latitude_deg = normal[2].clamp(-1.0, 1.0).asin().to_degrees();
        let longitude_deg = r[1].atan2(r[0]).to_degrees().rem_euclid(360.0);
        let sun = to_itrf * sun_position_km(self.clock.centuries(t_s));
        let sun_longitude_deg = sun[1].atan2(sun[0]).to_degrees();
        // Apparent solar time: 12 h when the Sun is on the local meridian.
        let local_solar_time_h =
            (12.0 + (longitude_deg - sun_longitude_deg) / 15.0).rem_euclid(24.0);
        let (mjd, ut_s) = self.axis.epoch(t_s).utc_mjd_and_seconds();
        let drivers = self.weather.drivers(mjd, ut_s)?;
        let input = MsisInput {
            day_of_year: day_of_year(mjd) as f64,
            ut_s,
            altitude_km: h,
            latitude_deg,
            longitude_deg,
            local_solar_time_h,
            f107: drivers.f107,
            f107a: drivers.f107a,
            geomagnetic: drivers.geomagnetic,
        };
        Ok((input, vertical))
    }
}

/// The last point a thread evaluated: a fit asks for the density at the same (t, r) for
/// the acceleration, its Jacobian and the drag scale's partial; the answer is a pure
/// function of the point, so reusing it changes no bit.
#[derive(Clone, Copy)]
struct LastPoint {
    id: u64,
    t_s: u64,
    r: [u64; 3],
    input: MsisInput,
    vertical: Vector3<f64>,
    rho: f64,
}

thread_local! {
    static LAST: std::cell::Cell<Option<LastPoint>> = const { std::cell::Cell::new(None) };
}

impl Thermosphere {
    /// The input, local vertical and density at (t_s, r_km), from this thread's last
    /// point when it is the same.
    fn evaluate(&self, t_s: f64, r_km: &Vector3<f64>) -> Result<LastPoint, String> {
        let key = (
            self.id,
            t_s.to_bits(),
            [r_km[0].to_bits(), r_km[1].to_bits(), r_km[2].to_bits()],
        );
        if let Some(last) = LAST.with(|c| c.get()) {
            if (last.id, last.t_s, last.r) == key {
                return Ok(last);
            }
        }
        let (input, vertical) = self.input_and_vertical(t_s, r_km)?;
        checked(&input)?;
        let point = LastPoint {
            id: key.0,
            t_s: key.1,
            r: key.2,
            input,
            vertical,
            rho: nrlmsise00(&input).mass_density_kg_m3,
        };
        LAST.with(|c| c.set(Some(point)));
        Ok(point)
    }
}

/// NaN or below the ground: no density.
fn checked(input: &MsisInput) -> Result<(), String> {
    if input.altitude_km.is_nan() || input.altitude_km <= -5.0 {
        return Err(format!(
            "NRLMSISE-00: geodetic altitude {:.3} km is below the ground",
            input.altitude_km
        ));
    }
    Ok(())
}

impl Atmosphere for Thermosphere {
    fn density_kg_m3(&self, _h_km: f64) -> Result<f64, String> {
        Err("NRLMSISE-00 needs the position and the time, not only an altitude".into())
    }

    fn density_at(&self, t_s: f64, r_km: &Vector3<f64>, _h_km: f64) -> Result<f64, String> {
        self.evaluate(t_s, r_km).map(|p| p.rho)
    }

    /// The vertical gradient only, by a forward difference of 1 m in altitude at the same
    /// place and time: the horizontal gradients (scales of thousands of km against a
    /// scale height of tens) are below the Jacobian's needs, and the inputs are computed
    /// once (two model calls instead of four full evaluations).
    fn density_and_gradient_at(
        &self,
        t_s: f64,
        r_km: &Vector3<f64>,
        _altitude: &dyn Fn(&Vector3<f64>) -> f64,
    ) -> Result<(f64, Vector3<f64>), String> {
        const STEP_KM: f64 = 1e-3;
        let p = self.evaluate(t_s, r_km)?;
        let above = MsisInput {
            altitude_km: p.input.altitude_km + STEP_KM,
            ..p.input
        };
        let slope = (nrlmsise00(&above).mass_density_kg_m3 - p.rho) / STEP_KM;
        Ok((p.rho, p.vertical * slope))
    }

    fn name(&self) -> &str {
        "nrlmsise00"
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::atmosphere::nrlmsise00::Geomagnetic;
    use crate::atmosphere::space_weather::Drivers;

    fn model(epoch: &str) -> (Thermosphere, Epoch) {
        let epoch = Epoch::parse_utc(epoch).unwrap();
        let weather = SpaceWeather::Constant(Drivers {
            f107: 150.0,
            f107a: 150.0,
            geomagnetic: Geomagnetic::Daily(12.0),
        });
        let earth = EarthOrientation::shipped().unwrap();
        (Thermosphere::new(weather, earth, epoch), epoch)
    }

    /// GCRF position (km) of geodetic (lat, lon, h) at `t_s`, by the closed-form
    /// geodetic → Cartesian formula (independent of Bowring's inverse iteration).
    fn gcrf_of(m: &Thermosphere, t_s: f64, lat: f64, lon: f64, h: f64) -> Vector3<f64> {
        let (sl, cl) = lat.to_radians().sin_cos();
        let (so, co) = lon.to_radians().sin_cos();
        let e2 = WGS84_F * (2.0 - WGS84_F);
        let n = WGS84_A_KM / (1.0 - e2 * sl * sl).sqrt();
        let itrf = Vector3::new(
            (n + h) * cl * co,
            (n + h) * cl * so,
            (n * (1.0 - e2) + h) * sl,
        );
        m.earth.at(m.tt0_s + t_s).gcrf_to_itrf().transpose() * itrf
    }

    #[test]
    fn geodetic_inputs_come_back() {
        let (m, _) = model("2026-03-11T06:30:00Z");
        for (lat, lon, h) in [
            (51.5, 359.9, 400.0),
            (-33.9, 151.2, 250.0),
            (89.0, 10.0, 800.0),
            (0.0, 200.0, 120.0),
        ] {
            let input = m.input(1800.0, &gcrf_of(&m, 1800.0, lat, lon, h)).unwrap();
            assert!((input.latitude_deg - lat).abs() < 1e-9, "{input:?}");
            assert!((input.longitude_deg - lon).abs() < 1e-9, "{input:?}");
            assert!((input.altitude_km - h).abs() < 1e-6, "{input:?}");
            // 06:30 + 1800 s = 07:00 UTC on 11 March, day 70.
            assert_eq!(input.day_of_year, 70.0);
            assert!((input.ut_s - 25_200.0).abs() < 1e-6);
        }
    }

    #[test]
    fn local_solar_time_is_apparent_and_runs_east() {
        // Apparent minus mean solar time is the equation of time: about −10 min on
        // 11 March and +16 min on 3 November (almanac values, from memory).
        for (epoch, eot_min) in [
            ("2026-03-11T12:00:00Z", -10.1),
            ("2026-11-03T12:00:00Z", 16.4),
        ] {
            let (m, _) = model(epoch);
            for lon in [0.0, 90.0, 200.0] {
                let input = m.input(0.0, &gcrf_of(&m, 0.0, 10.0, lon, 400.0)).unwrap();
                let mean = (input.ut_s / 3600.0 + lon / 15.0).rem_euclid(24.0);
                let mut diff_min = (input.local_solar_time_h - mean) * 60.0;
                if diff_min > 720.0 {
                    diff_min -= 1440.0;
                }
                if diff_min < -720.0 {
                    diff_min += 1440.0;
                }
                assert!(
                    (diff_min - eot_min).abs() < 0.5,
                    "{epoch} lon {lon}: {diff_min} min"
                );
            }
        }
    }

    #[test]
    fn the_vertical_gradient_is_the_gradient_to_the_jacobian_s_needs() {
        // Against full forward differences in the three ECI directions (the trait's
        // default): the horizontal parts it leaves out are small.
        let (m, _) = model("2026-03-11T00:00:00Z");
        let r = gcrf_of(&m, 600.0, 35.0, 120.0, 420.0);
        let (rho, g) = m.density_and_gradient_at(600.0, &r, &|_| 0.0).unwrap();
        let mut full = Vector3::zeros();
        for j in 0..3 {
            let mut p = r;
            p[j] += 1e-3;
            full[j] = (m.density_at(600.0, &p, 0.0).unwrap() - rho) / 1e-3;
        }
        // Here the horizontal part is 0.5 % of the vertical.
        assert!((g - full).norm() < 1e-2 * full.norm(), "{g} vs {full}");
        // Density decreases upwards: the gradient points down, |∇ρ| ≈ ρ / H, H 40–80 km.
        assert!(g.dot(&r) < 0.0);
        let h = rho / g.norm();
        assert!(h > 30.0 && h < 90.0, "scale height {h} km");
    }

    #[test]
    fn density_needs_position_and_time() {
        let (m, _) = model("2026-03-11T00:00:00Z");
        assert!(m.density_kg_m3(400.0).is_err());
        let rho = m
            .density_at(0.0, &gcrf_of(&m, 0.0, 20.0, 30.0, 400.0), 400.0)
            .unwrap();
        // NRLMSISE-00 at 400 km, moderate activity: of order 1e-12 kg/m³ (common practice).
        assert!(rho > 5e-13 && rho < 1e-11, "{rho}");
        let inside = m.density_at(0.0, &Vector3::new(100.0, 0.0, 0.0), 0.0);
        assert!(inside.is_err());
    }
}
