//! Random well-behaved formula trees (for property tests and fuzzing): every value
//! stays finite along ordinary orbits (bounded exponentials, divisors kept away from 0).

use super::{parse::parse_any, Node};
use rand_chacha::ChaCha8Rng;
use rand_core::Rng;

fn pick<'a>(rng: &mut ChaCha8Rng, items: &[&'a str]) -> &'a str {
    items[(rng.next_u64() % items.len() as u64) as usize]
}

fn scalar(rng: &mut ChaCha8Rng, depth: usize) -> String {
    const LEAVES: [&str; 10] = [
        "(t / 20000)",
        "(h / 500)",
        "(rho * 1e12)",
        "cos(u)",
        "sin(u)",
        "lit",
        "1.5",
        "0.25",
        "(norm(v) / 7)",
        "dot(R, sun)",
    ];
    if depth == 0 || rng.next_u64().is_multiple_of(3) {
        return pick(rng, &LEAVES).to_string();
    }
    let a = scalar(rng, depth - 1);
    let b = scalar(rng, depth - 1);
    match rng.next_u64() % 7 {
        0 => format!("({a} + {b})"),
        1 => format!("({a} - {b})"),
        2 => format!("({a} * {b})"),
        3 => format!("({a} / (1.5 + {b} * {b}))"),
        4 => format!("exp(-({a}) * ({a}))"),
        5 => format!("cos({a})"),
        _ => format!("({a})^2"),
    }
}

fn vector(rng: &mut ChaCha8Rng, depth: usize) -> String {
    const LEAVES: [&str; 7] = [
        "R",
        "T",
        "N",
        "sun",
        "(vrel / norm(vrel))",
        "(r / norm(r))",
        "(v / 7)",
    ];
    if depth == 0 || rng.next_u64().is_multiple_of(3) {
        return pick(rng, &LEAVES).to_string();
    }
    let a = vector(rng, depth - 1);
    match rng.next_u64() % 5 {
        0 => format!("({} * {a})", scalar(rng, depth - 1)),
        1 => format!("({a} + {})", vector(rng, depth - 1)),
        2 => format!("({a} - {})", vector(rng, depth - 1)),
        3 => format!("cross({a}, {})", vector(rng, depth - 1)),
        _ => format!("({a} / (1 + {}^2))", scalar(rng, depth - 1)),
    }
}

/// A random vector-valued tree of depth at most `depth`.
pub fn vector_tree(rng: &mut ChaCha8Rng, depth: usize) -> Node {
    let text = vector(rng, depth);
    parse_any(&text).unwrap_or(Node::Term(super::Terminal::UnitT))
}
