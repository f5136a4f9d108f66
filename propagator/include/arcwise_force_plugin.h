/*
 * arcwise force plugin ABI, version 1.
 *
 * A force plugin is a shared library (.so / .dylib / .dll) exporting the functions
 * below with C linkage. Any propagator that can load a C shared library can use it:
 * arcwise loads it with libloading; examples/python/ loads it with ctypes.
 *
 * Units and frame: time in SI seconds (TAI scale) from the reference epoch given in
 * the metadata; state [x, y, z, vx, vy, vz] in km and km/s in ECI (J2000 mean equator
 * and equinox, treated as GCRF); acceleration [ax, ay, az] in km/s^2, ECI.
 *
 * Thread safety: every function must be reentrant. A host may call
 * arcwise_plugin_acceleration from several threads at once with different arguments;
 * plugins keep no mutable global state.
 *
 * Errors: a function that cannot produce a finite answer returns a nonzero status and
 * leaves `out` unspecified; hosts must treat any nonzero status as an error (never as
 * a zero acceleration). Plugins must not let a panic or exception cross the boundary.
 *
 * Security: a plugin is native code and runs with the rights of the user who loads it.
 * Load plugins only by explicit path, from files only you can write.
 */
#ifndef ARCWISE_FORCE_PLUGIN_H
#define ARCWISE_FORCE_PLUGIN_H

#include <stddef.h>
#include <stdint.h>

#ifdef __cplusplus
extern "C" {
#endif

#define ARCWISE_PLUGIN_ABI_VERSION 1u

/* Status codes. */
#define ARCWISE_OK 0                  /* success */
#define ARCWISE_ERR_OUTSIDE_VALIDITY 1 /* the state or time is outside the validity window */
#define ARCWISE_ERR_NON_FINITE 2      /* the computed acceleration is NaN or infinite */
#define ARCWISE_ERR_PANIC 3           /* the implementation failed internally */
#define ARCWISE_ERR_BAD_ARGUMENT 4    /* a null pointer, or a non-finite input the answer depends on */
#define ARCWISE_ERR_NEEDS_HOST_INPUT 5 /* reads the host's environment; call the _in entry point */

/*
 * What a host passes to a plugin whose metadata names a "host_density": the drag
 * density at the call's time and position, and its gradient with respect to the ECI
 * position (for the partials).
 */
typedef struct arcwise_environment {
    double density_kg_m3;            /* kg/m^3 */
    double density_gradient[3];      /* kg/m^3 per km, ECI */
} arcwise_environment;

/* The ABI version the plugin implements; hosts refuse anything but the one they know. */
uint32_t arcwise_plugin_abi_version(void);

/*
 * Metadata as a NUL-terminated UTF-8 JSON object, owned by the plugin and valid while
 * it is loaded. Keys:
 *   "abi_version"          integer, = arcwise_plugin_abi_version()
 *   "name"                 string
 *   "frame"                "ECI"
 *   "reference_epoch_utc"  ISO 8601 UTC, where t_s = 0
 *   "source_checksum"      string ("sha256:<hex>") of the learned-force file it was
 *                          compiled from, or null for a hand-written plugin
 *   "validity"             null, or { "start_utc", "end_utc", "min_altitude_km",
 *                          "max_altitude_km", "outside": "warn" | "zero" | "refuse",
 *                          optional "time_margin_s", "altitude_margin_km" (default 0),
 *                          optional "radius_km" of the altitudes (default 6378.1363) }.
 *                          With "warn" the host checks the window itself and warns
 *                          its user once when the plugin is used outside it.
 *   "units"                { "time": "s", "state": "km, km/s", "acceleration": "km/s^2" }
 *   "host_density"         optional: the drag atmosphere (e.g. "nrlmsise00") whose
 *                          density the plugin reads from the host. Such a plugin exports
 *                          the _in entry points below; a host must call them, and must
 *                          refuse the plugin when its own drag is another atmosphere or
 *                          absent. Its plain entry points return
 *                          ARCWISE_ERR_NEEDS_HOST_INPUT.
 */
const char *arcwise_plugin_metadata(void);

/* Acceleration at t_s seconds from the reference epoch and ECI state[6]; writes out[3]. */
int32_t arcwise_plugin_acceleration(double t_s, const double state[6], double out[3]);

/*
 * Optional: n accelerations at once. t_s[n], states[6*n] (row-major), out[3*n].
 * Returns the first nonzero status met, or ARCWISE_OK.
 */
int32_t arcwise_plugin_acceleration_batch(size_t n, const double *t_s, const double *states,
                                          double *out);

/*
 * Optional: the partial derivatives of the acceleration with respect to the state,
 * out[18] row-major 3x6 (d a_i / d state_j; 1/s^2 for position, 1/s for velocity). Hosts
 * that integrate variational equations use it instead of finite differences.
 */
int32_t arcwise_plugin_partials(double t_s, const double state[6], double out[18]);

/*
 * For plugins with "host_density": as arcwise_plugin_acceleration and
 * arcwise_plugin_partials, with the host's environment at (t_s, state). A null or
 * non-finite environment is ARCWISE_ERR_BAD_ARGUMENT. The partials one is optional.
 */
int32_t arcwise_plugin_acceleration_in(double t_s, const double state[6],
                                       const arcwise_environment *env, double out[3]);
int32_t arcwise_plugin_partials_in(double t_s, const double state[6],
                                   const arcwise_environment *env, double out[18]);

#ifdef __cplusplus
}
#endif

#endif /* ARCWISE_FORCE_PLUGIN_H */
