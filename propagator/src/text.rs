//! Names that reach files, reports and generated code: one rule for all of them.
//!
//! A name (an object's, a learned force's, a plugin's) is written into OEM headers,
//! YAML comments, JSON reports and generated Rust source. A newline or another control
//! character in it would add lines there (an OEM header line, a YAML key, a line of
//! code), so such names are refused where they are read.

/// The longest name accepted, characters.
pub const MAX_NAME_CHARS: usize = 200;

/// Checks a name: no control characters (including newlines, tabs, escape sequences,
/// and the Unicode line and paragraph separators), at most [`MAX_NAME_CHARS`].
/// `field` names the field in the message.
pub fn check_name(field: &str, value: &str) -> Result<(), String> {
    if let Some(c) = value.chars().find(|c| is_forbidden(*c)) {
        return Err(format!(
            "{field} contains the control character {:?}: names may not contain control characters or line breaks",
            c
        ));
    }
    if value.chars().count() > MAX_NAME_CHARS {
        return Err(format!(
            "{field} is longer than {MAX_NAME_CHARS} characters"
        ));
    }
    Ok(())
}

/// The name with every forbidden character replaced by `?` (for writers handed a name
/// that did not come through [`check_name`]).
pub fn sanitized(value: &str) -> String {
    value
        .chars()
        .map(|c| if is_forbidden(c) { '?' } else { c })
        .collect()
}

fn is_forbidden(c: char) -> bool {
    c.is_control() || matches!(c, '\u{2028}' | '\u{2029}' | '\u{85}')
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn control_characters_and_line_breaks_are_refused() {
        assert!(check_name("name", "TESSERA-114 (débris)").is_ok());
        for bad in [
            "a\nb",
            "a\rb",
            "a\tb",
            "a\u{1b}[2Jb",
            "a\u{2028}b",
            "a\u{0}b",
        ] {
            assert!(check_name("name", bad).is_err(), "{bad:?}");
            assert!(!sanitized(bad).chars().any(is_forbidden));
        }
        assert!(check_name("name", &"x".repeat(201)).is_err());
    }
}
