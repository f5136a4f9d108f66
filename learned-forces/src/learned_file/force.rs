//! The force a learned file describes, evaluated in process, and the resolver that lets
//! `forces.yaml` `plugins:` list learned files.

use super::*;

/// A learned force evaluated in process (tree evaluation).
pub struct LearnedForce {
    pub(super) name: String,
    /// The compiled sum Σ c_k g_k (the in-process evaluator).
    pub program: Program,
    pub(super) needs: Needs,
    /// Terminal constants.
    pub context: Context,
    /// Formula time = our `t_s` + this, s.
    pub offset_s: f64,
    /// Valid formula times, s.
    pub window_s: (f64, f64),
    /// Valid altitudes, km.
    pub altitude_km: (f64, f64),
    /// Outside policy.
    pub policy: OutsidePolicy,
    /// Formula time zero (the file's `epoch_utc`).
    pub(super) epoch: Epoch,
    pub(super) outside_seen: AtomicBool,
}

impl LearnedForce {
    /// Whether a `warn` force was evaluated outside its window at least once.
    pub fn was_used_outside(&self) -> bool {
        self.outside_seen.load(Ordering::Relaxed)
    }

    /// The warning recorded (once per run) when a `warn` force is used outside.
    fn outside_warning(&self) -> String {
        let utc = |s: f64| self.epoch.plus_seconds(s).to_utc_string();
        format!(
            "{} was used outside its validity window ({} to {}, {:.0} to {:.0} km altitude): the force there is an extrapolation of the training arc",
            self.name,
            utc(self.window_s.0),
            utc(self.window_s.1),
            self.altitude_km.0,
            self.altitude_km.1
        )
    }

    fn inside(&self, tf: f64, x: &StateVector) -> bool {
        let h = (x[0] * x[0] + x[1] * x[1] + x[2] * x[2]).sqrt() - self.context.radius_km;
        tf >= self.window_s.0
            && tf <= self.window_s.1
            && h >= self.altitude_km.0
            && h <= self.altitude_km.1
    }

    /// Applies the outside policy: `Ok(true)` evaluate, `Ok(false)` contribute zero.
    fn gate(&self, t_s: f64, tf: f64, x: &StateVector) -> Result<bool, ForceError> {
        if self.inside(tf, x) {
            return Ok(true);
        }
        // NaN fails every comparison of `inside`: refuse it rather than answer zero.
        if !(tf.is_finite() && x.iter().all(|c| c.is_finite())) {
            return Err(ForceError {
                force: self.name.clone(),
                t_s,
                reason: "non-finite time or state".into(),
            });
        }
        match self.policy {
            OutsidePolicy::Warn => {
                if !self.outside_seen.swap(true, Ordering::Relaxed) {
                    propagator::notice::warn_once(self.outside_warning());
                }
                Ok(true)
            }
            OutsidePolicy::Zero => Ok(false),
            OutsidePolicy::Refuse => Err(ForceError {
                force: self.name.clone(),
                t_s,
                reason: "outside the validity window of the learned force (time or altitude)"
                    .into(),
            }),
        }
    }
}

impl Force for LearnedForce {
    fn name(&self) -> &str {
        &self.name
    }

    fn acceleration(&self, t_s: f64, x: &StateVector) -> Result<Vector3<f64>, ForceError> {
        let tf = t_s + self.offset_s;
        if !self.gate(t_s, tf, x)? {
            return Ok(Vector3::zeros());
        }
        let p = Terminals::with_needs(
            tf,
            [x[0], x[1], x[2]],
            [x[3], x[4], x[5]],
            &self.context,
            &self.needs,
        );
        let v = self.program.eval(&p);
        propagator::force::finite_or_error(&self.name, t_s, Vector3::new(v[0], v[1], v[2]))
    }

    fn switching(&self, t_s: f64, x: &StateVector, out: &mut Vec<f64>) {
        if self.needs.lit {
            self.context.shadow_switching(t_s + self.offset_s, x, out);
        }
    }

    /// Exact partials by dual-number evaluation.
    fn partials(&self, t_s: f64, x: &StateVector) -> Result<Matrix3x6<f64>, ForceError> {
        let tf = t_s + self.offset_s;
        if !self.gate(t_s, tf, x)? {
            return Ok(Matrix3x6::zeros());
        }
        let d = |k: usize| crate::expr::num::Dual::var(x[k], k);
        let p = Terminals::with_needs(
            tf,
            [d(0), d(1), d(2)],
            [d(3), d(4), d(5)],
            &self.context,
            &self.needs,
        );
        let v = self.program.eval(&p);
        let mut m = Matrix3x6::zeros();
        for i in 0..3 {
            for j in 0..6 {
                m[(i, j)] = v[i].d[j];
            }
        }
        Ok(m)
    }
}

/// Lets `forces.yaml` `plugins:` name learned-force files (`.yaml`/`.yml`), evaluated in
/// process.
pub struct LearnedResolver;

impl propagator::config::PluginResolver for LearnedResolver {
    fn resolve(
        &self,
        path: &Path,
        checksum: Option<&str>,
        reference: &Epoch,
        host: (&propagator::config::ForcesFile, &Path),
    ) -> Option<Result<Box<dyn Force>, String>> {
        let ext = path
            .extension()
            .and_then(|e| e.to_str())?
            .to_ascii_lowercase();
        if ext != "yaml" && ext != "yml" {
            return None;
        }
        Some((|| {
            let f = LearnedFile::load(path).map_err(|e| e.to_string())?;
            if let Some(want) = checksum {
                if f.checksum != want {
                    return Err(format!(
                        "{}: checksum {} is not the expected {want}",
                        path.display(),
                        f.checksum
                    ));
                }
            }
            let force = f
                .force_in(reference, Some(host))
                .map_err(|e| format!("{}: {e}", path.display()))?;
            Ok(Box::new(force) as Box<dyn Force>)
        })())
    }
}
