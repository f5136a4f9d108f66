//! A next-arc regression gate through the library API: predict a new arc from a learned
//! file's end state with and without its force, and fail (exit 1) past a threshold —
//! the same check as `arcwise check`, in a program you can put in your own pipeline.
//!
//!     cargo run --release --example next_arc_gate -- LEARNED.yaml FORCES.yaml NEXT.csv MAX_RMS_KM

use learned_forces::arc::{Arc, ArcDefaults};
use learned_forces::learned_file::LearnedFile;
use learned_forces::next_arc::{check, GateRule};
use propagator::config::ForcesFile;
use std::path::Path;
use std::process::ExitCode;

fn run(args: &[String]) -> Result<bool, String> {
    let [learned, forces, next, max] = args else {
        return Err("usage: next_arc_gate LEARNED.yaml FORCES.yaml NEXT.csv MAX_RMS_KM".into());
    };
    let max: f64 = max.parse().map_err(|_| "MAX_RMS_KM must be a number")?;
    let file = LearnedFile::load(Path::new(learned)).map_err(|e| e.to_string())?;
    let spec = ForcesFile::load(Path::new(forces)).map_err(|e| e.to_string())?;
    let arc = Arc::load(Path::new(next), ArcDefaults::default(), &spec.central_body)
        .map_err(|e| e.to_string())?;
    // The learned prediction starts from the fit with the learned force; the baseline
    // from the known-forces fit of the same training arc.
    let known_forces = |at: propagator::Epoch| {
        spec.build(Path::new(forces), at)
            .map(|b| b.model)
            .map_err(|e| e.to_string())
    };
    let rule = GateRule {
        max_rms_km: Some(max),
        ..GateRule::default()
    };
    let host = Some((&spec, Path::new(forces)));
    let checked = check(&file, &known_forces, host, &arc, &rule).map_err(|e| e.to_string())?;
    let (rl, rb, gate) = (checked.learned.rms, checked.known.rms, checked.outcome);
    println!(
        "next arc RMS: {:.2} m with the learned force, {:.2} m with the known forces only",
        rl * 1e3,
        rb * 1e3
    );
    for r in &gate.reasons {
        println!("  {r}");
    }
    Ok(gate.passed)
}

fn main() -> ExitCode {
    let args: Vec<String> = std::env::args().skip(1).collect();
    match run(&args) {
        Ok(true) => ExitCode::SUCCESS,
        Ok(false) => {
            println!("gate FAILED");
            ExitCode::from(1)
        }
        Err(e) => {
            eprintln!("next_arc_gate: {e}");
            ExitCode::from(2)
        }
    }
}
