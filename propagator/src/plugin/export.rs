//! Exporting a Rust [`Force`] as a plugin: the boundary functions behind
//! [`export_force_plugin!`](crate::export_force_plugin). They catch panics and turn
//! non-finite results and errors into status codes, so nothing unwinds into C.

use super::{status, Metadata};
use crate::force::Force;
use crate::state::StateVector;
use std::ffi::{c_char, CString};
use std::panic::{catch_unwind, AssertUnwindSafe};

/// Evaluates `force()` at `(t_s, state)` into `out`; returns a status code.
///
/// # Safety
/// `state` must point to 6 readable doubles and `out` to 3 writable doubles (or be null,
/// which is answered with `BAD_ARGUMENT`).
pub unsafe fn acceleration<F: Force + 'static>(
    force: impl FnOnce() -> &'static F,
    t_s: f64,
    state: *const f64,
    out: *mut f64,
) -> i32 {
    if state.is_null() || out.is_null() {
        return status::BAD_ARGUMENT;
    }
    let result = catch_unwind(AssertUnwindSafe(|| {
        // SAFETY: the caller guarantees 6 readable doubles.
        let s = unsafe { std::slice::from_raw_parts(state, 6) };
        if !(super::all_finite(s) && t_s.is_finite()) {
            return Err(status::BAD_ARGUMENT);
        }
        let x = StateVector::from_column_slice(s);
        match force().acceleration(t_s, &x) {
            Ok(a) if super::all_finite(a.as_slice()) => Ok(a),
            Ok(_) => Err(status::NON_FINITE),
            Err(e) if e.reason.contains("outside the validity") => Err(status::OUTSIDE_VALIDITY),
            Err(_) => Err(status::FAILED),
        }
    }));
    match result {
        Ok(Ok(a)) => {
            // SAFETY: the caller guarantees 3 writable doubles. Element stores (not a
            // memcpy) let the caller's loads forward from them without a stall.
            unsafe {
                out.write(a[0]);
                out.add(1).write(a[1]);
                out.add(2).write(a[2]);
            }
            status::OK
        }
        Ok(Err(code)) => code,
        Err(_) => status::FAILED,
    }
}

/// `n` accelerations; stops at and returns the first nonzero status.
///
/// # Safety
/// `t_s` must point to `n` doubles, `states` to `6 n`, `out` to `3 n` writable ones.
pub unsafe fn acceleration_batch<F: Force + 'static>(
    force: impl Fn() -> &'static F,
    n: usize,
    t_s: *const f64,
    states: *const f64,
    out: *mut f64,
) -> i32 {
    if n > 0 && (t_s.is_null() || states.is_null() || out.is_null()) {
        return status::BAD_ARGUMENT;
    }
    for k in 0..n {
        // SAFETY: in bounds by the caller's guarantee.
        let code = unsafe { acceleration(&force, *t_s.add(k), states.add(6 * k), out.add(3 * k)) };
        if code != status::OK {
            return code;
        }
    }
    status::OK
}

/// The metadata as a C string, built once; null if it cannot be encoded.
pub fn metadata_ptr(
    cell: &'static std::sync::OnceLock<Option<CString>>,
    make: impl FnOnce() -> Metadata,
) -> *const c_char {
    let r = catch_unwind(AssertUnwindSafe(|| {
        cell.get_or_init(|| {
            serde_json::to_string(&make())
                .ok()
                .and_then(|s| CString::new(s).ok())
        })
        .as_ref()
        .map(|c| c.as_ptr())
        .unwrap_or(std::ptr::null())
    }));
    r.unwrap_or(std::ptr::null())
}

/// Exports a [`Force`] through the C ABI of `arcwise_force_plugin.h`.
///
/// ```ignore
/// propagator::export_force_plugin!(MyForce, MyForce::new(), my_metadata());
/// ```
/// `$make` builds the force (once, on first use) and `$meta` the [`Metadata`]. Use it
/// once, in the root of a `cdylib` crate.
#[macro_export]
macro_rules! export_force_plugin {
    ($force:ty, $make:expr, $meta:expr) => {
        static __ARCWISE_FORCE: ::std::sync::OnceLock<$force> = ::std::sync::OnceLock::new();
        static __ARCWISE_META: ::std::sync::OnceLock<Option<::std::ffi::CString>> =
            ::std::sync::OnceLock::new();

        fn __arcwise_force() -> &'static $force {
            __ARCWISE_FORCE.get_or_init(|| $make)
        }

        /// ABI version (see arcwise_force_plugin.h).
        #[no_mangle]
        pub extern "C" fn arcwise_plugin_abi_version() -> u32 {
            $crate::plugin::ABI_VERSION
        }

        /// Metadata JSON (see arcwise_force_plugin.h).
        #[no_mangle]
        pub extern "C" fn arcwise_plugin_metadata() -> *const ::std::ffi::c_char {
            $crate::plugin::export::metadata_ptr(&__ARCWISE_META, || $meta)
        }

        /// Acceleration (see arcwise_force_plugin.h).
        ///
        /// # Safety
        /// `state` points to 6 doubles, `out` to 3 writable doubles.
        #[no_mangle]
        pub unsafe extern "C" fn arcwise_plugin_acceleration(
            t_s: f64,
            state: *const f64,
            out: *mut f64,
        ) -> i32 {
            unsafe { $crate::plugin::export::acceleration(__arcwise_force, t_s, state, out) }
        }

        /// Batch acceleration (see arcwise_force_plugin.h).
        ///
        /// # Safety
        /// `t_s` points to `n` doubles, `states` to `6 n`, `out` to `3 n` writable doubles.
        #[no_mangle]
        pub unsafe extern "C" fn arcwise_plugin_acceleration_batch(
            n: usize,
            t_s: *const f64,
            states: *const f64,
            out: *mut f64,
        ) -> i32 {
            unsafe {
                $crate::plugin::export::acceleration_batch(__arcwise_force, n, t_s, states, out)
            }
        }
    };
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::force::ForceError;
    use nalgebra::Vector3;

    struct Panics;
    impl Force for Panics {
        fn name(&self) -> &str {
            "panics"
        }
        fn acceleration(&self, t_s: f64, _x: &StateVector) -> Result<Vector3<f64>, ForceError> {
            if t_s > 1.0 {
                panic!("boom");
            }
            Ok(Vector3::new(f64::NAN, 0.0, 0.0))
        }
    }
    static PANICS: Panics = Panics;

    #[test]
    fn panics_and_nan_become_status_codes() {
        let state = [7000.0, 0.0, 0.0, 0.0, 7.5, 0.0];
        let mut out = [0.0; 3];
        let f = || &PANICS;
        // SAFETY: valid buffers (and deliberately null ones).
        unsafe {
            assert_eq!(
                acceleration(f, 0.0, state.as_ptr(), out.as_mut_ptr()),
                status::NON_FINITE
            );
            assert_eq!(
                acceleration(f, 2.0, state.as_ptr(), out.as_mut_ptr()),
                status::FAILED
            );
            assert_eq!(
                acceleration(f, 0.0, std::ptr::null(), out.as_mut_ptr()),
                status::BAD_ARGUMENT
            );
            assert_eq!(
                acceleration(f, f64::NAN, state.as_ptr(), out.as_mut_ptr()),
                status::BAD_ARGUMENT
            );
        }
    }
}
