//! JSON reports (`--report`): written atomically, field names carry units.

use crate::error::CliError;
use propagator::ephemeris::write_atomically;
use std::path::Path;

/// Writes `value` as pretty JSON to `path` (temporary file + rename), with the run's
/// warnings so far (`warnings`, e.g. a learned force used outside its validity window).
pub fn write_report(path: &Path, value: &serde_json::Value) -> Result<(), CliError> {
    let mut value = value.clone();
    if let Some(map) = value.as_object_mut() {
        map.insert("warnings".into(), propagator::notice::all().into());
    }
    let text = serde_json::to_string_pretty(&value).map_err(|e| {
        CliError::input(format!("{}: cannot encode the report: {e}", path.display()))
    })?;
    write_atomically(path, format!("{text}\n").as_bytes()).map_err(CliError::input)
}

/// A state as a JSON object with units in the keys.
pub fn state_json(epoch: &propagator::Epoch, x: &propagator::StateVector) -> serde_json::Value {
    serde_json::json!({
        "epoch_utc": epoch.to_utc_string(),
        "r_km": [x[0], x[1], x[2]],
        "v_km_s": [x[3], x[4], x[5]],
    })
}
