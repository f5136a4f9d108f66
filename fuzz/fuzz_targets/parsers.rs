//! One target for every input parser: the first byte picks the kind of input (arc CSV,
//! OEM, ephemeris CSV, forces.yaml, STATE.yaml, scenario, learned file, resealed learned
//! file, formula, rank hypotheses, Earth-orientation file, SP3 orbit, space weather, TDM,
//! sites, measurement CSV), the rest is its text. A crash is a parser that panicked, an error that
//! does not name the file, or a formula that does not print and parse back to itself
//! (the checks of `tests/common/parsers.rs`, shared with the proptest suite).
#![no_main]

#[path = "../../tests/common/parsers.rs"]
mod parsers;

use libfuzzer_sys::fuzz_target;
use parsers::Input;

fuzz_target!(|data: &[u8]| {
    let Some((&kind, rest)) = data.split_first() else {
        return;
    };
    let kind = Input::ALL[kind as usize % Input::ALL.len()];
    let text = String::from_utf8_lossy(rest);
    kind.check(&text);
});
