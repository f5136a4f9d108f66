//! A next-arc regression gate through the library API: predict a new arc from a learned
//! file's end state with and without its force, and fail (exit 1) past a threshold —
//! the same check as `arcwise check`, in a program you can put in your own pipeline.
//!
//!     cargo run --release --example next_arc_gate -- LEARNED.yaml FORCES.yaml NEXT.csv MAX_RMS_KM

use learned_forces::arc::{Arc, ArcDefaults};
use learned_forces::learned_file::LearnedFile;
use propagator::config::ForcesFile;
use propagator::propagation::{propagate, Options, Request, Silent};
use propagator::{Epoch, ForceModel, StateVector, TimeAxis};
use std::path::Path;
use std::process::ExitCode;

fn rms(model: &ForceModel, x0: StateVector, axis: &TimeAxis, arc: &Arc) -> Result<f64, String> {
    let times: Vec<f64> = arc
        .observations
        .iter()
        .map(|o| axis.seconds(&o.epoch))
        .collect();
    let req = Request {
        x0,
        t0_s: 0.0,
        t_end_s: *times.last().ok_or("empty arc")?,
        output_times_s: &times,
        stop_times_s: &[],
    };
    let p = propagate(model, &req, &Options::default(), &mut Silent).map_err(|e| e.to_string())?;
    let ss: f64 = p
        .samples
        .iter()
        .zip(&arc.observations)
        .map(|((_, x), o)| (o.r_km - x.fixed_rows::<3>(0)).norm_squared())
        .sum();
    Ok((ss / times.len() as f64).sqrt())
}

fn run(args: &[String]) -> Result<bool, String> {
    let [learned, forces, next, max] = args else {
        return Err("usage: next_arc_gate LEARNED.yaml FORCES.yaml NEXT.csv MAX_RMS_KM".into());
    };
    let max: f64 = max.parse().map_err(|_| "MAX_RMS_KM must be a number")?;
    let file = LearnedFile::load(Path::new(learned)).map_err(|e| e.to_string())?;
    let spec = ForcesFile::load(Path::new(forces)).map_err(|e| e.to_string())?;
    let arc = Arc::load(Path::new(next), ArcDefaults::default(), &spec.central_body)
        .map_err(|e| e.to_string())?;
    let s = &file.state_at_end;
    let epoch = Epoch::parse_utc(&s.epoch_utc).map_err(|e| e.to_string())?;
    let x0 = StateVector::new(
        s.r_km[0],
        s.r_km[1],
        s.r_km[2],
        s.v_km_s[0],
        s.v_km_s[1],
        s.v_km_s[2],
    );
    let axis = TimeAxis::new(epoch);
    let base = spec
        .build(Path::new(forces), epoch)
        .map_err(|e| e.to_string())?
        .model;
    let mut corrected = spec
        .build(Path::new(forces), epoch)
        .map_err(|e| e.to_string())?
        .model;
    corrected.push(Box::new(file.force(&epoch)?));
    let (rb, rl) = (
        rms(&base, x0, &axis, &arc)?,
        rms(&corrected, x0, &axis, &arc)?,
    );
    println!(
        "next arc RMS: {:.2} m with the learned force, {:.2} m without",
        rl * 1e3,
        rb * 1e3
    );
    Ok(rl <= max)
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
