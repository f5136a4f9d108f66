//! Light time: where and when a signal met the object, for ranges time-tagged at either
//! end of the path. The site moves during the light time (it turns with the Earth), and
//! the object moves along its trajectory; both are given as positions (GCRF, km) at any
//! time (s), so a fit can hand in its own trajectory and Earth orientation.
//!
//! Each leg solves |moving(t_fixed ± Δ) − fixed| = c·Δ for Δ by fixed-point iteration,
//! which converges by the factor v/c (10⁻⁵ in LEO) per step.

use nalgebra::Vector3;

/// Speed of light, km/s (exact, SI definition).
pub const C_KM_S: f64 = 299_792.458;

/// A position (GCRF, km) at a time (s).
pub type Track<'a> = &'a dyn Fn(f64) -> Vector3<f64>;

/// Which end of the path a two-way range is time-tagged at (`TIMETAG_REF`).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Tag {
    /// When the signal left the site.
    Transmit,
    /// When it came back.
    Receive,
}

/// A two-way range and the three instants of its path.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct TwoWay {
    /// Half the round-trip light distance, km.
    pub range_km: f64,
    /// When the signal left the site, s.
    pub transmit_s: f64,
    /// When it met the object, s.
    pub bounce_s: f64,
    /// When it was back at the site, s.
    pub receive_s: f64,
}

/// Most iterations of one leg: far more than any orbit needs (3 or 4 to 1e-15 s).
const ITERATIONS: usize = 20;

/// The light time Δ ≥ 0 (s) between the fixed end `(t, at)` and a point moving on
/// `moving`, looking `later` (the signal goes out at t) or earlier (it arrives at t).
fn leg(t: f64, at: &Vector3<f64>, moving: Track, later: bool) -> Result<f64, String> {
    let sign = if later { 1.0 } else { -1.0 };
    let mut dt = (moving(t) - at).norm() / C_KM_S;
    for _ in 0..ITERATIONS {
        let next = (moving(t + sign * dt) - at).norm() / C_KM_S;
        if !next.is_finite() {
            return Err("light time: a position is not finite".into());
        }
        if (next - dt).abs() <= 1e-15 * next.max(1e-3) {
            return Ok(next);
        }
        dt = next;
    }
    Err(format!(
        "light time did not converge in {ITERATIONS} iterations (an object moving near the speed of light?)"
    ))
}

/// The two-way range from `site` to `object` and back, time-tagged at `tag_s` at the
/// end `tag` names.
pub fn two_way(tag_s: f64, tag: Tag, site: Track, object: Track) -> Result<TwoWay, String> {
    let (transmit_s, bounce_s, receive_s) = match tag {
        Tag::Receive => {
            let down = leg(tag_s, &site(tag_s), object, false)?;
            let bounce = tag_s - down;
            let up = leg(bounce, &object(bounce), site, false)?;
            (bounce - up, bounce, tag_s)
        }
        Tag::Transmit => {
            let up = leg(tag_s, &site(tag_s), object, true)?;
            let bounce = tag_s + up;
            let down = leg(bounce, &object(bounce), site, true)?;
            (tag_s, bounce, bounce + down)
        }
    };
    Ok(TwoWay {
        range_km: 0.5 * C_KM_S * (receive_s - transmit_s),
        transmit_s,
        bounce_s,
        receive_s,
    })
}

/// The one-way range (km) of a signal the object sent and the site received at
/// `receive_s`, and when it was sent (s).
pub fn one_way(receive_s: f64, site: Track, object: Track) -> Result<(f64, f64), String> {
    let down = leg(receive_s, &site(receive_s), object, false)?;
    Ok((C_KM_S * down, receive_s - down))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_still_object_is_its_distance_away_and_an_impossible_one_is_refused() {
        let site = |_: f64| Vector3::new(6378.0, 0.0, 0.0);
        let still = |_: f64| Vector3::new(6378.0 + 1000.0, 0.0, 0.0);
        let w = two_way(10.0, Tag::Receive, &site, &still).unwrap();
        assert!((w.range_km - 1000.0).abs() < 1e-9);
        assert!((w.receive_s - w.transmit_s - 2000.0 / C_KM_S).abs() < 1e-15);
        // Receding faster than light: no signal ever meets it; an error, not a hang.
        let runaway = |t: f64| Vector3::new(6378.0 + 1000.0 - 2.0 * C_KM_S * t, 0.0, 0.0);
        let e = two_way(10.0, Tag::Transmit, &site, &runaway).unwrap_err();
        assert!(e.contains("did not converge"), "{e}");
        let nan = |_: f64| Vector3::new(f64::NAN, 0.0, 0.0);
        assert!(one_way(0.0, &site, &nan).is_err());
    }
}
