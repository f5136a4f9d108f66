//! Reads a CCSDS Tracking Data Message and writes it again as arcwise writes TDMs (UTC,
//! full-precision values), for the check that an independent reader (`ccsds-ndm`, run by
//! CI through `tools/check_tdm_ccsds_ndm.py`) finds the same measurements in both.
//!
//! cargo run --release --example tdm_rewrite -- IN.tdm OUT.tdm

use propagator::tracking::tdm;
use std::path::Path;

fn main() {
    let args: Vec<String> = std::env::args().collect();
    let [_, input, output] = &args[..] else {
        eprintln!("usage: tdm_rewrite IN.tdm OUT.tdm");
        std::process::exit(2);
    };
    let text = match std::fs::read_to_string(input) {
        Ok(t) => t,
        Err(e) => {
            eprintln!("{input}: {e}");
            std::process::exit(2);
        }
    };
    let message = match tdm::read(&text, Path::new(input)) {
        Ok(m) => m,
        Err(e) => {
            eprintln!("{e}");
            std::process::exit(2);
        }
    };
    if let Err(e) = std::fs::write(output, tdm::format(&message)) {
        eprintln!("{output}: {e}");
        std::process::exit(2);
    }
    let n: usize = message.segments.iter().map(|s| s.measurements.len()).sum();
    println!(
        "{input} → {output}: {} segment(s), {n} measurements",
        message.segments.len()
    );
}
