//! Loading a native force plugin safely enough to trust its answers.
//!
//! Before the first call the loader checks, in order: the path is explicit and exists,
//! the file is not writable by group or others, it is a shared library, it exports the
//! required symbols, its ABI version is ours, its metadata parses and says ECI, and (when
//! the caller knows it) its source checksum matches the learned-force file it claims to
//! come from. Every refusal names the file and the reason.
//!
//! A plugin is native code and runs with the rights of the user who loads it.

use super::{status_text, Environment, Metadata, Validity, ABI_VERSION};
use crate::force::drag::Drag;
use crate::force::{Force, ForceError};
use crate::state::StateVector;
use crate::time::Epoch;
use libloading::Library;
use nalgebra::Vector3;
use std::ffi::{c_char, CStr};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::Arc;

type AbiVersionFn = unsafe extern "C" fn() -> u32;
type MetadataFn = unsafe extern "C" fn() -> *const c_char;
type AccelerationFn = unsafe extern "C" fn(f64, *const f64, *mut f64) -> i32;
type BatchFn = unsafe extern "C" fn(usize, *const f64, *const f64, *mut f64) -> i32;
type PartialsFn = unsafe extern "C" fn(f64, *const f64, *mut f64) -> i32;
type AccelerationInFn = unsafe extern "C" fn(f64, *const f64, *const Environment, *mut f64) -> i32;
type PartialsInFn = unsafe extern "C" fn(f64, *const f64, *const Environment, *mut f64) -> i32;

/// Why a plugin was refused.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("plugin {}: {reason}", path.display())]
pub struct PluginError {
    /// The plugin file as given.
    pub path: PathBuf,
    /// What is wrong.
    pub reason: String,
}

fn refuse(path: &Path, reason: impl Into<String>) -> PluginError {
    PluginError {
        path: path.to_path_buf(),
        reason: reason.into(),
    }
}

/// A loaded, checked plugin, usable as an ordinary [`Force`].
pub struct PluginForce {
    name: String,
    path: PathBuf,
    metadata: Metadata,
    acceleration: AccelerationFn,
    batch: Option<BatchFn>,
    partials: Option<PartialsFn>,
    /// Plugin time = our `t_s` + this offset, s.
    offset_s: f64,
    /// For an `outside: warn` plugin: the window the host watches.
    watch: Option<Watch>,
    /// For a plugin that reads the host's density: the host's drag and the entry points
    /// that take it.
    host: Option<HostInput>,
    // Declared last: dropped after the function pointers above are no longer usable.
    _library: Arc<Library>,
}

/// The validity window of an `outside: warn` plugin, watched by the host so the user
/// hears (once) that the plugin was used outside it.
struct Watch {
    /// Plugin times, s.
    window_s: (f64, f64),
    /// Altitudes, km.
    altitude_km: (f64, f64),
    radius_km: f64,
    seen: AtomicBool,
    warning: String,
}

impl Watch {
    fn new(v: &Validity, plugin_ref: &Epoch, name: &str, path: &Path) -> Result<Self, PluginError> {
        let at = |s: &str, field: &str| {
            Epoch::parse_utc(s)
                .map(|e| e.seconds_since(plugin_ref))
                .map_err(|e| refuse(path, format!("metadata validity.{field}: {e}")))
        };
        let window_s = (
            at(&v.start_utc, "start_utc")?,
            at(&v.end_utc, "end_utc")? + v.time_margin_s,
        );
        let altitude_km = (
            v.min_altitude_km - v.altitude_margin_km,
            v.max_altitude_km + v.altitude_margin_km,
        );
        let radius_km = v.radius_km.unwrap_or(6378.1363);
        let numbers = [
            window_s.0,
            window_s.1,
            altitude_km.0,
            altitude_km.1,
            radius_km,
        ];
        if !numbers.iter().all(|x| x.is_finite())
            || window_s.1 < window_s.0
            || altitude_km.1 < altitude_km.0
        {
            return Err(refuse(
                path,
                "metadata validity: the window must be finite and ordered",
            ));
        }
        Ok(Self {
            window_s,
            altitude_km,
            radius_km,
            seen: AtomicBool::new(false),
            warning: format!(
                "plugin `{name}` ({}) was used outside its validity window ({} to {} plus {} s, {:.0} to {:.0} km altitude): the force there is an extrapolation",
                path.display(), v.start_utc, v.end_utc, v.time_margin_s, altitude_km.0, altitude_km.1
            ),
        })
    }

    /// Records the warning the first time `(t, x)` (plugin time) is outside.
    fn observe(&self, t: f64, x: &StateVector) {
        if self.seen.load(Ordering::Relaxed) {
            return;
        }
        let h = x.fixed_rows::<3>(0).norm() - self.radius_km;
        let inside = t >= self.window_s.0
            && t <= self.window_s.1
            && h >= self.altitude_km.0
            && h <= self.altitude_km.1;
        if !inside && !self.seen.swap(true, Ordering::Relaxed) {
            crate::notice::warn_once(self.warning.clone());
        }
    }
}

/// The `_in` entry points of a plugin that reads the host's density, and the drag whose
/// density (on the host's time axis) it is given.
struct HostInput {
    drag: Arc<Drag>,
    acceleration: AccelerationInFn,
    partials: Option<PartialsInFn>,
}

impl HostInput {
    /// The plugin's symbols, checked against what its metadata says it reads and what the
    /// host offers.
    fn bind(
        library: &Library,
        metadata: &Metadata,
        host_drag: Option<Arc<Drag>>,
        path: &Path,
    ) -> Result<Option<HostInput>, PluginError> {
        let Some(model) = &metadata.host_density else {
            return Ok(None);
        };
        // Text from the plugin reaches messages: a plain name only.
        crate::text::check_name("metadata host_density", model).map_err(|m| refuse(path, m))?;
        let drag = host_drag.ok_or_else(|| {
            refuse(
                path,
                format!("it reads the host's `{model}` drag density: list it in the plugins: of a forces file whose drag uses atmosphere {model}"),
            )
        })?;
        let have = drag.atmosphere.name();
        if have != model {
            return Err(refuse(
                path,
                format!("it reads the host's `{model}` drag density, but the forces file's drag uses `{have}`: its density would mean another atmosphere"),
            ));
        }
        // SAFETY: the symbol types are those of arcwise_force_plugin.h.
        let acceleration: AccelerationInFn = unsafe {
            *library
                .get::<AccelerationInFn>(b"arcwise_plugin_acceleration_in")
                .map_err(|_| {
                    refuse(
                        path,
                        "its metadata says it reads the host's density, but it has no `arcwise_plugin_acceleration_in`",
                    )
                })?
        };
        // SAFETY: as above.
        let partials: Option<PartialsInFn> = unsafe {
            library
                .get::<PartialsInFn>(b"arcwise_plugin_partials_in")
                .ok()
                .map(|s| *s)
        };
        Ok(Some(HostInput {
            drag,
            acceleration,
            partials,
        }))
    }

    /// The environment at host time `t_s` and state `x`.
    fn at(&self, t_s: f64, x: &StateVector) -> Result<Environment, ForceError> {
        let r = Vector3::new(x[0], x[1], x[2]);
        let (rho, g) = self.drag.density_and_gradient(t_s, &r)?;
        Ok(Environment {
            density_kg_m3: rho,
            density_gradient: [g[0], g[1], g[2]],
        })
    }
}

impl std::fmt::Debug for PluginForce {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("PluginForce")
            .field("name", &self.name)
            .field("path", &self.path)
            .field("offset_s", &self.offset_s)
            .finish()
    }
}

/// Checks who can change the file (Unix): it must belong to the user running arcwise
/// (or to root), be writable by nobody else, and sit in a folder nobody else can write
/// (where another user could swap it between the check and the load).
fn check_permissions(path: &Path, abs: &Path, meta: &std::fs::Metadata) -> Result<(), PluginError> {
    #[cfg(unix)]
    {
        use std::os::unix::fs::{MetadataExt, PermissionsExt};
        let mode = meta.permissions().mode();
        if mode & 0o022 != 0 {
            return Err(refuse(
                path,
                format!(
                    "the file is writable by group or others (mode {:o}); refusing to load native code others can change (fix: chmod go-w)",
                    mode & 0o777
                ),
            ));
        }
        // SAFETY: geteuid has no preconditions and cannot fail.
        let me = unsafe { libc::geteuid() };
        if meta.uid() != me && meta.uid() != 0 {
            return Err(refuse(
                path,
                format!(
                    "the file belongs to another user (uid {}); refusing to load native code another user controls",
                    meta.uid()
                ),
            ));
        }
        let folder = abs.parent().unwrap_or(Path::new("/"));
        let fm = std::fs::metadata(folder)
            .map_err(|e| refuse(path, format!("cannot read its folder: {e}")))?;
        let fmode = fm.permissions().mode();
        if fmode & 0o022 != 0 {
            return Err(refuse(
                path,
                format!(
                    "its folder {} is writable by group or others (mode {:o}): another user could replace the plugin; keep plugins in a folder only you can write",
                    folder.display(),
                    fmode & 0o7777
                ),
            ));
        }
        if fm.uid() != me && fm.uid() != 0 {
            return Err(refuse(
                path,
                format!(
                    "its folder {} belongs to another user (uid {}); keep plugins in a folder you own",
                    folder.display(),
                    fm.uid()
                ),
            ));
        }
    }
    let _ = (path, abs, meta);
    Ok(())
}

/// Checks the file starts like a shared library of this platform.
fn check_magic(path: &Path) -> Result<(), PluginError> {
    use std::io::Read;
    let mut head = [0u8; 4];
    let mut f = std::fs::File::open(path).map_err(|e| refuse(path, format!("cannot open: {e}")))?;
    let n = f
        .read(&mut head)
        .map_err(|e| refuse(path, format!("cannot read: {e}")))?;
    let ok = n == 4
        && (head == [0x7f, b'E', b'L', b'F']
            || head == [0xcf, 0xfa, 0xed, 0xfe]
            || head == [0xca, 0xfe, 0xba, 0xbe]
            || head[..2] == [b'M', b'Z']);
    if ok {
        Ok(())
    } else {
        Err(refuse(
            path,
            "not a shared library (no ELF, Mach-O or PE header)",
        ))
    }
}

impl PluginForce {
    /// Loads and checks the plugin at `path` (explicit; never searched for), for a force
    /// model whose time axis starts at `reference`. `expected_checksum`, when given, must
    /// equal the plugin's `source_checksum`. A plugin that reads the host's density is
    /// refused here ([`Self::load_in`] gives it one).
    pub fn load(
        path: &Path,
        reference: &Epoch,
        expected_checksum: Option<&str>,
    ) -> Result<Self, PluginError> {
        Self::load_in(path, reference, expected_checksum, None)
    }

    /// As [`Self::load`], in a force model whose drag is `host_drag` (on the same time
    /// axis): a plugin whose metadata names a `host_density` is given that drag's density
    /// and gradient at each call, and refused when the drag is missing or another
    /// atmosphere.
    pub fn load_in(
        path: &Path,
        reference: &Epoch,
        expected_checksum: Option<&str>,
        host_drag: Option<Arc<Drag>>,
    ) -> Result<Self, PluginError> {
        let abs = std::fs::canonicalize(path)
            .map_err(|e| refuse(path, format!("cannot find the file: {e}")))?;
        let meta =
            std::fs::metadata(&abs).map_err(|e| refuse(path, format!("cannot read: {e}")))?;
        if !meta.is_file() {
            return Err(refuse(path, "not a regular file"));
        }
        check_permissions(path, &abs, &meta)?;
        check_magic(&abs)?;
        // SAFETY: loading runs the library's initialisers: native code with the user's
        // rights, which is what a plugin is. The path is absolute, so nothing is searched.
        let library =
            unsafe { Library::new(&abs) }.map_err(|e| refuse(path, format!("cannot load: {e}")))?;
        // SAFETY: the symbol types are those of arcwise_force_plugin.h.
        let (abi, metadata_fn, acceleration, batch, partials) = unsafe {
            let get = |name: &str| -> Result<(), PluginError> {
                library
                    .get::<unsafe extern "C" fn()>(name.as_bytes())
                    .map(|_| ())
                    .map_err(|_| refuse(path, format!("missing symbol `{name}`: not an arcwise force plugin, or built for another ABI")))
            };
            get("arcwise_plugin_abi_version")?;
            get("arcwise_plugin_metadata")?;
            get("arcwise_plugin_acceleration")?;
            let abi: AbiVersionFn = *library
                .get::<AbiVersionFn>(b"arcwise_plugin_abi_version")
                .map_err(|e| refuse(path, e.to_string()))?;
            let metadata_fn: MetadataFn = *library
                .get::<MetadataFn>(b"arcwise_plugin_metadata")
                .map_err(|e| refuse(path, e.to_string()))?;
            let acceleration: AccelerationFn = *library
                .get::<AccelerationFn>(b"arcwise_plugin_acceleration")
                .map_err(|e| refuse(path, e.to_string()))?;
            let batch: Option<BatchFn> = library
                .get::<BatchFn>(b"arcwise_plugin_acceleration_batch")
                .ok()
                .map(|s| *s);
            let partials: Option<PartialsFn> = library
                .get::<PartialsFn>(b"arcwise_plugin_partials")
                .ok()
                .map(|s| *s);
            (abi, metadata_fn, acceleration, batch, partials)
        };
        // SAFETY: a plain function of the ABI.
        let version = unsafe { abi() };
        if version != ABI_VERSION {
            return Err(refuse(
                path,
                format!("ABI version {version}; this arcwise supports version {ABI_VERSION}"),
            ));
        }
        // SAFETY: the ABI promises a NUL-terminated string owned by the plugin.
        let ptr = unsafe { metadata_fn() };
        if ptr.is_null() {
            return Err(refuse(path, "metadata function returned null"));
        }
        let text = unsafe { CStr::from_ptr(ptr) }
            .to_str()
            .map_err(|_| refuse(path, "metadata is not UTF-8"))?;
        let metadata: Metadata = serde_json::from_str(text)
            .map_err(|e| refuse(path, format!("metadata is not valid: {e}")))?;
        if metadata.abi_version != version {
            return Err(refuse(
                path,
                "metadata abi_version differs from arcwise_plugin_abi_version()",
            ));
        }
        crate::text::check_name("metadata name", &metadata.name).map_err(|m| refuse(path, m))?;
        if metadata.frame != "ECI" {
            return Err(refuse(
                path,
                format!("frame `{}`: only ECI is supported", metadata.frame),
            ));
        }
        let plugin_ref = Epoch::parse_utc(&metadata.reference_epoch_utc)
            .map_err(|e| refuse(path, format!("metadata reference_epoch_utc: {e}")))?;
        if let Some(want) = expected_checksum {
            match &metadata.source_checksum {
                Some(have) if have == want => {}
                Some(have) => {
                    return Err(refuse(
                        path,
                        format!("source checksum {have} does not match the learned-force file's {want}: the plugin was built from another version of the file"),
                    ))
                }
                None => return Err(refuse(path, format!("has no source checksum, expected {want}"))),
            }
        }
        let host = HostInput::bind(&library, &metadata, host_drag, path)?;
        let watch = match &metadata.validity {
            Some(v) if v.outside == "warn" => {
                Some(Watch::new(v, &plugin_ref, &metadata.name, path)?)
            }
            _ => None,
        };
        Ok(Self {
            name: format!("plugin:{}", metadata.name),
            path: path.to_path_buf(),
            offset_s: reference.seconds_since(&plugin_ref),
            watch,
            metadata,
            acceleration,
            // The batch entry point passes no environment.
            batch: if host.is_some() { None } else { batch },
            host,
            partials,
            _library: Arc::new(library),
        })
    }

    /// The plugin's metadata.
    pub fn metadata(&self) -> &Metadata {
        &self.metadata
    }

    /// Whether the plugin exports analytic partials (with the host's density, when it
    /// reads it).
    pub fn has_partials(&self) -> bool {
        match &self.host {
            Some(h) => h.partials.is_some(),
            None => self.partials.is_some(),
        }
    }

    /// Whether the plugin exports the batch entry point.
    pub fn has_batch(&self) -> bool {
        self.batch.is_some()
    }

    /// Accelerations (km/s², ECI) for many `(t_s, state)` at once, through the batch
    /// entry point when present.
    pub fn accelerations(
        &self,
        t_s: &[f64],
        states: &[StateVector],
    ) -> Result<Vec<Vector3<f64>>, ForceError> {
        assert_eq!(t_s.len(), states.len());
        let Some(batch) = self.batch else {
            return t_s
                .iter()
                .zip(states)
                .map(|(t, x)| self.acceleration(*t, x))
                .collect();
        };
        let ts: Vec<f64> = t_s.iter().map(|t| t + self.offset_s).collect();
        if let Some(w) = &self.watch {
            for (t, x) in ts.iter().zip(states) {
                w.observe(*t, x);
            }
        }
        let flat: Vec<f64> = states.iter().flat_map(|x| x.iter().copied()).collect();
        let mut out = vec![0.0; 3 * states.len()];
        // SAFETY: buffers sized as the ABI requires.
        let code = unsafe { batch(ts.len(), ts.as_ptr(), flat.as_ptr(), out.as_mut_ptr()) };
        if code != 0 {
            return Err(self.status_error(t_s.first().copied().unwrap_or(0.0), code));
        }
        let v: Vec<Vector3<f64>> = out
            .chunks(3)
            .map(|c| Vector3::new(c[0], c[1], c[2]))
            .collect();
        if let Some((i, a)) = v
            .iter()
            .enumerate()
            .find(|(_, a)| !crate::force::plausible(a))
        {
            return Err(self.implausible_error(t_s[i], *a));
        }
        Ok(v)
    }

    /// The plugin said success but wrote NaN or an infinity.
    fn non_finite_error(&self, t_s: f64) -> ForceError {
        ForceError {
            force: self.name.clone(),
            t_s,
            reason: format!(
                "plugin {} reported success but returned a non-finite value (NaN or infinity)",
                self.path.display()
            ),
        }
    }

    /// The plugin returned NaN, an infinity, or an absurd magnitude.
    #[cold]
    fn implausible_error(&self, t_s: f64, a: Vector3<f64>) -> ForceError {
        if !super::all_finite(a.as_slice()) {
            return self.non_finite_error(t_s);
        }
        ForceError {
            force: self.name.clone(),
            t_s,
            reason: format!(
                "plugin {} returned |a| = {:.3e} km/s², beyond any physical acceleration (> {} km/s²)",
                self.path.display(),
                a.norm(),
                crate::force::MAX_PLAUSIBLE_KM_S2
            ),
        }
    }

    fn status_error(&self, t_s: f64, code: i32) -> ForceError {
        ForceError {
            force: self.name.clone(),
            t_s,
            reason: format!(
                "plugin {} returned status {code} ({})",
                self.path.display(),
                status_text(code)
            ),
        }
    }
}

impl Force for PluginForce {
    fn name(&self) -> &str {
        &self.name
    }

    fn acceleration(&self, t_s: f64, x: &StateVector) -> Result<Vector3<f64>, ForceError> {
        if let Some(w) = &self.watch {
            w.observe(t_s + self.offset_s, x);
        }
        let mut out = [0.0f64; 3];
        let t = t_s + self.offset_s;
        // SAFETY: 6 readable and 3 writable doubles (and one environment), as the ABI
        // requires; the library stays loaded while `self` lives.
        let code = match &self.host {
            None => unsafe { (self.acceleration)(t, x.as_ptr(), out.as_mut_ptr()) },
            Some(h) => {
                let env = h.at(t_s, x)?;
                unsafe { (h.acceleration)(t, x.as_ptr(), &env, out.as_mut_ptr()) }
            }
        };
        if code != 0 {
            return Err(self.status_error(t_s, code));
        }
        let a = Vector3::new(out[0], out[1], out[2]);
        if !crate::force::plausible(&a) {
            return Err(self.implausible_error(t_s, a));
        }
        Ok(a)
    }

    /// The plugin's analytic partials when it exports them; central differences otherwise.
    fn partials(&self, t_s: f64, x: &StateVector) -> Result<nalgebra::Matrix3x6<f64>, ForceError> {
        let t = t_s + self.offset_s;
        let mut out = [0.0f64; 18];
        // SAFETY: 6 readable and 18 writable doubles (and one environment).
        let code = match (&self.host, self.partials) {
            (Some(h), _) => match h.partials {
                Some(p) => {
                    let env = h.at(t_s, x)?;
                    unsafe { p(t, x.as_ptr(), &env, out.as_mut_ptr()) }
                }
                None => return crate::force::central_difference_partials(self, t_s, x),
            },
            (None, Some(p)) => unsafe { p(t, x.as_ptr(), out.as_mut_ptr()) },
            (None, None) => return crate::force::central_difference_partials(self, t_s, x),
        };
        if code != 0 {
            return Err(self.status_error(t_s, code));
        }
        if !super::all_finite(&out) {
            return Err(self.non_finite_error(t_s));
        }
        Ok(nalgebra::Matrix3x6::from_row_slice(&out))
    }
}
