//! Parsing the formula text (see the module above for the vocabulary).
//!
//! Grammar: `sum := product (('+'|'-') product)*`, `product := unary (('*'|'/') unary)*`,
//! `unary := '-' unary | power`, `power := atom ('^' int | '^(' int ')')?`,
//! `atom := number | name | function '(' args ')' | '(' sum ')'`.

use super::ops::MAX_POWER;
use super::{Node, Op1, Op2, Terminal, Ty};

/// A formula that does not parse or type-check, with the character position.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("formula `{text}`: {message} (at character {position})")]
pub struct ParseError {
    /// The formula.
    pub text: String,
    /// 0-based character position.
    pub position: usize,
    /// What is wrong.
    pub message: String,
}

struct Parser<'a> {
    text: &'a str,
    chars: Vec<char>,
    pos: usize,
    depth: usize,
}

const MAX_DEPTH: usize = 64;
const MAX_LEN: usize = 4096;

/// Parses and type-checks `text`; the result is a vector-valued term.
pub fn parse(text: &str) -> Result<Node, ParseError> {
    let node = parse_any(text)?;
    match node.ty() {
        Ok(Ty::Vector) => Ok(node),
        Ok(Ty::Scalar) => Err(ParseError {
            text: text.into(),
            position: 0,
            message: "a force term must be a vector (multiply by R, T, N or another vector)".into(),
        }),
        Err(e) => Err(ParseError {
            text: text.into(),
            position: 0,
            message: e.0,
        }),
    }
}

/// Parses `text` as an expression of either type (type-checked).
pub fn parse_any(text: &str) -> Result<Node, ParseError> {
    // Characters, not bytes: the error position is a character position (a 4 kB text
    // of multi-byte characters is shorter than 4096 characters; found by the fuzzer).
    if text.len() > MAX_LEN && text.chars().count() > MAX_LEN {
        return Err(ParseError {
            text: text.chars().take(40).collect::<String>() + "…",
            position: MAX_LEN,
            message: format!("longer than {MAX_LEN} characters"),
        });
    }
    let mut p = Parser {
        text,
        chars: text.chars().collect(),
        pos: 0,
        depth: 0,
    };
    let n = p.sum()?;
    p.skip_ws();
    if p.pos < p.chars.len() {
        return Err(p.err(format!("unexpected `{}`", p.chars[p.pos])));
    }
    n.ty().map_err(|e| p.err_at(0, e.0))?;
    Ok(n)
}

impl Parser<'_> {
    fn err(&self, message: String) -> ParseError {
        self.err_at(self.pos, message)
    }

    fn err_at(&self, position: usize, message: String) -> ParseError {
        ParseError {
            text: self.text.into(),
            position,
            message,
        }
    }

    fn skip_ws(&mut self) {
        while self.pos < self.chars.len() && self.chars[self.pos].is_whitespace() {
            self.pos += 1;
        }
    }

    fn peek(&mut self) -> Option<char> {
        self.skip_ws();
        self.chars.get(self.pos).copied()
    }

    fn expect(&mut self, c: char) -> Result<(), ParseError> {
        if self.peek() == Some(c) {
            self.pos += 1;
            Ok(())
        } else {
            Err(self.err(format!("expected `{c}`")))
        }
    }

    fn enter(&mut self) -> Result<(), ParseError> {
        self.depth += 1;
        if self.depth > MAX_DEPTH {
            return Err(self.err(format!("nested deeper than {MAX_DEPTH}")));
        }
        Ok(())
    }

    fn sum(&mut self) -> Result<Node, ParseError> {
        self.enter()?;
        let mut a = self.product()?;
        while let Some(op) = self.peek().and_then(|c| Op2::infix(c, 1)) {
            self.pos += 1;
            a = Node::binary(op, a, self.product()?);
        }
        self.depth -= 1;
        Ok(a)
    }

    fn product(&mut self) -> Result<Node, ParseError> {
        let mut a = self.unary()?;
        while let Some(op) = self.peek().and_then(|c| Op2::infix(c, 2)) {
            self.pos += 1;
            a = Node::binary(op, a, self.unary()?);
        }
        Ok(a)
    }

    fn unary(&mut self) -> Result<Node, ParseError> {
        if self.peek() == Some('-') {
            self.pos += 1;
            self.enter()?;
            let inner = self.unary()?;
            self.depth -= 1;
            // A negative literal is one constant, so printing and parsing round-trip.
            return Ok(match inner {
                Node::Const(c) => Node::Const(-c),
                other => Node::unary(Op1::Neg, other),
            });
        }
        self.power()
    }

    fn power(&mut self) -> Result<Node, ParseError> {
        let base = self.atom()?;
        if self.peek() == Some('^') {
            self.pos += 1;
            let paren = self.peek() == Some('(');
            if paren {
                self.pos += 1;
            }
            let start = self.pos;
            self.skip_ws();
            if self.chars.get(self.pos) == Some(&'-') {
                self.pos += 1;
            }
            while self.pos < self.chars.len() && self.chars[self.pos].is_ascii_digit() {
                self.pos += 1;
            }
            let s: String = self.chars[start..self.pos].iter().collect();
            let n: i32 = s
                .trim()
                .parse()
                .map_err(|_| self.err_at(start, "expected an integer power".into()))?;
            if n == 0 || n.abs() > MAX_POWER {
                return Err(self.err_at(
                    start,
                    format!("power {n}: only small non-zero integers (−{MAX_POWER}…{MAX_POWER})"),
                ));
            }
            if paren {
                self.expect(')')?;
            }
            return Ok(Node::unary(Op1::Pow(n), base));
        }
        Ok(base)
    }

    fn atom(&mut self) -> Result<Node, ParseError> {
        match self.peek() {
            None => Err(self.err("unexpected end of the formula".into())),
            Some('(') => {
                self.pos += 1;
                let n = self.sum()?;
                self.expect(')')?;
                Ok(n)
            }
            Some(c) if c.is_ascii_digit() || c == '.' => self.number(),
            Some(c) if c.is_ascii_alphabetic() => self.name(),
            Some(c) => Err(self.err(format!("unexpected `{c}`"))),
        }
    }

    fn number(&mut self) -> Result<Node, ParseError> {
        let start = self.pos;
        while self.pos < self.chars.len() {
            let c = self.chars[self.pos];
            let exp_sign = (c == '-' || c == '+')
                && self.pos > start
                && matches!(self.chars[self.pos - 1], 'e' | 'E');
            if c.is_ascii_digit() || c == '.' || c == 'e' || c == 'E' || exp_sign {
                self.pos += 1;
            } else {
                break;
            }
        }
        let s: String = self.chars[start..self.pos].iter().collect();
        let v: f64 = s
            .parse()
            .map_err(|_| self.err_at(start, format!("`{s}` is not a number")))?;
        if !v.is_finite() {
            return Err(self.err_at(start, format!("`{s}` is not finite")));
        }
        Ok(Node::Const(v))
    }

    fn name(&mut self) -> Result<Node, ParseError> {
        let start = self.pos;
        while self.pos < self.chars.len()
            && (self.chars[self.pos].is_ascii_alphanumeric() || self.chars[self.pos] == '_')
        {
            self.pos += 1;
        }
        let name: String = self.chars[start..self.pos].iter().collect();
        if let Some(t) = Terminal::from_name(&name) {
            return Ok(Node::Term(t));
        }
        if name == "pi" {
            return Ok(Node::Const(std::f64::consts::PI));
        }
        if let Some(d) = name.strip_prefix('k') {
            if let Ok(i) = d.parse::<usize>() {
                if i < 10 && d.len() == 1 {
                    return Ok(Node::Param(i));
                }
            }
        }
        let unary = Op1::CALLS
            .into_iter()
            .find(|op| op.call_name() == Some(&name));
        let binary = Op2::call(&name);
        if unary.is_none() && binary.is_none() {
            return Err(self.err_at(start, unknown_name(&name)));
        }
        self.expect('(')?;
        let a = self.sum()?;
        let node = match (unary, binary) {
            (Some(op), _) => Node::unary(op, a),
            (None, Some(op)) => {
                self.expect(',')?;
                Node::binary(op, a, self.sum()?)
            }
            (None, None) => return Err(self.err_at(start, unknown_name(&name))),
        };
        self.expect(')')?;
        Ok(node)
    }
}

/// The error for a name that is no terminal, constant or function, listing them all.
fn unknown_name(name: &str) -> String {
    let terminals: Vec<&str> = Terminal::ALL.iter().map(|t| t.name()).collect();
    let functions: Vec<&str> = Op1::CALLS
        .iter()
        .filter_map(|op| op.call_name())
        .chain(Op2::ALL.iter().filter_map(|op| match op.spelling() {
            super::Spelling::Call(name) => Some(name),
            super::Spelling::Infix(..) => None,
        }))
        .collect();
    format!(
        "unknown name `{name}` (terminals: {} k0…k9; functions: {})",
        terminals.join(" "),
        functions.join(" ")
    )
}
