//! Hostile inputs for every parser: random bytes and mutated valid files never panic,
//! and errors name the file. (Part of the robustness sweep; seeded, deterministic.)

mod common;
use common::parsers::Input;
use rand_chacha::ChaCha8Rng;
use rand_core::{Rng, SeedableRng};

fn mutate(rng: &mut ChaCha8Rng, text: &str) -> String {
    let mut chars: Vec<char> = text.chars().collect();
    let alphabet: Vec<char> = "0123456789.-+eE:,[]{}#\n TZ\"'nanNaNinf\u{0}é∞"
        .chars()
        .collect();
    for _ in 0..(1 + rng.next_u64() % 6) {
        if chars.is_empty() {
            chars.push('x');
        }
        let i = (rng.next_u64() as usize) % chars.len();
        match rng.next_u64() % 5 {
            0 => {
                chars.remove(i);
            }
            1 => chars.insert(i, alphabet[(rng.next_u64() as usize) % alphabet.len()]),
            2 => chars[i] = alphabet[(rng.next_u64() as usize) % alphabet.len()],
            3 => {
                // Duplicate or drop a whole line.
                let s: String = chars.iter().collect();
                let mut lines: Vec<&str> = s.lines().collect();
                if !lines.is_empty() {
                    let k = (rng.next_u64() as usize) % lines.len();
                    if rng.next_u64().is_multiple_of(2) {
                        lines.insert(k, lines[k]);
                    } else {
                        lines.remove(k);
                    }
                }
                chars = lines.join("\n").chars().collect();
            }
            _ => {
                let j = (rng.next_u64() as usize) % chars.len();
                chars.swap(i, j);
            }
        }
    }
    chars.into_iter().collect()
}

fn random_bytes(rng: &mut ChaCha8Rng) -> String {
    let n = (rng.next_u64() % 300) as usize;
    let bytes: Vec<u8> = (0..n).map(|_| rng.next_u64() as u8).collect();
    String::from_utf8_lossy(&bytes).into_owned()
}

/// Checks 1500 mutations of the valid example and 300 random strings.
fn hammer(seed: u64, kind: Input) {
    let valid = kind.valid_example();
    assert!(
        kind.parse(&valid).is_ok(),
        "the valid {} must parse: {:?}",
        kind.file_name(),
        kind.parse(&valid)
    );
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    for k in 0..1800 {
        let text = if k < 1500 {
            mutate(&mut rng, &valid)
        } else {
            random_bytes(&mut rng)
        };
        kind.check(&text);
    }
}

#[test]
fn every_parser_survives_mutated_and_random_input() {
    for (seed, kind) in Input::ALL.into_iter().enumerate() {
        hammer(seed as u64 + 1, kind);
    }
}
