//! Reading input files with bounds: a size limit on every file, and for YAML a
//! pre-scan that bounds nesting and alias expansion before `serde_yaml` sees the text.
//!
//! `serde_yaml` (0.9, archived upstream but stable and still the de-facto API) expands
//! aliases while deserializing: a 15 kB file with an alias fan-out asked for 1.8 GB, and
//! 100,000 nested brackets took 84 s. We keep it for its API and bound its input here: a
//! streaming event parser (`yaml-rust2`, which never expands aliases) counts the nodes
//! the document expands to and its depth, and stops at the first excess.

use serde::de::DeserializeOwned;
use std::io::Read;
use std::path::Path;
use yaml_rust2::parser::{Event, Parser};

/// The largest configuration file read (forces, state, scenario, learned, hypotheses):
/// 4 MiB.
pub const MAX_CONFIG_BYTES: u64 = 4 << 20;
/// The largest data file read (arcs, ephemerides): 2 GiB.
pub const MAX_DATA_BYTES: u64 = 2 << 30;
/// The deepest YAML nesting accepted (our files need fewer than 8 levels).
pub const MAX_YAML_DEPTH: usize = 32;
/// The most YAML nodes a document may expand to, aliases included.
pub const MAX_YAML_NODES: u64 = 200_000;

/// A parsed data file shared within the process: the same file (same canonical path,
/// length and modification time, same parsed type) is read and parsed once however many
/// times a command builds its force model (the learner rebuilds it for every fit, and
/// arcs read the Earth-orientation file the field also uses). Errors are not kept, so a
/// bad file is reported every time; a file changed on disk is read again.
pub fn parsed_once<T: Send + Sync + 'static>(
    path: &Path,
    parse: impl FnOnce(&Path) -> Result<T, String>,
) -> Result<std::sync::Arc<T>, String> {
    use std::any::{Any, TypeId};
    use std::collections::HashMap;
    use std::sync::{Arc, Mutex, OnceLock};
    type Key = (
        TypeId,
        std::path::PathBuf,
        u64,
        Option<std::time::SystemTime>,
    );
    static CACHE: OnceLock<Mutex<HashMap<Key, Arc<dyn Any + Send + Sync>>>> = OnceLock::new();
    let key = std::fs::canonicalize(path).ok().and_then(|p| {
        let m = std::fs::metadata(&p).ok()?;
        Some((TypeId::of::<T>(), p, m.len(), m.modified().ok()))
    });
    let Some(key) = key else {
        // Missing or unreadable: the parser says why, in its own words.
        return parse(path).map(Arc::new);
    };
    let cache = CACHE.get_or_init(|| Mutex::new(HashMap::new()));
    let hit = cache
        .lock()
        .unwrap_or_else(|p| p.into_inner())
        .get(&key)
        .cloned();
    if let Some(Ok(v)) = hit.map(|v| v.downcast::<T>()) {
        return Ok(v);
    }
    let v = Arc::new(parse(path)?);
    cache
        .lock()
        .unwrap_or_else(|p| p.into_inner())
        .insert(key, v.clone());
    Ok(v)
}

/// Reads a UTF-8 text file of at most `max_bytes`; the message does not name the file
/// (callers add it, with their own error type).
pub fn read_text(path: &Path, max_bytes: u64) -> Result<String, String> {
    let f = std::fs::File::open(path).map_err(|e| format!("cannot read: {e}"))?;
    let mut bytes = Vec::new();
    f.take(max_bytes + 1)
        .read_to_end(&mut bytes)
        .map_err(|e| format!("cannot read: {e}"))?;
    if bytes.len() as u64 > max_bytes {
        return Err(format!(
            "the file is larger than {} MiB, the limit for this kind of file",
            max_bytes >> 20
        ));
    }
    String::from_utf8(bytes).map_err(|e| {
        format!(
            "not UTF-8 text (invalid byte at offset {})",
            e.utf8_error().valid_up_to()
        )
    })
}

/// Checks YAML text against the size, depth and expansion bounds.
pub fn check_yaml_bounds(text: &str) -> Result<(), String> {
    if text.len() as u64 > MAX_CONFIG_BYTES {
        return Err(format!(
            "the document is larger than {} MiB",
            MAX_CONFIG_BYTES >> 20
        ));
    }
    let mut parser = Parser::new_from_str(text);
    // Open collections: (anchor id, node count at their start).
    let mut open: Vec<(usize, u64)> = Vec::new();
    // Expanded size of each anchored node.
    let mut sizes: std::collections::HashMap<usize, u64> = Default::default();
    let mut nodes: u64 = 0;
    loop {
        let (event, mark) = parser.next_token().map_err(|e| e.to_string())?;
        let at = |m: String| format!("line {}: {m}", mark.line());
        match event {
            Event::StreamEnd => return Ok(()),
            Event::SequenceStart(anchor, _) | Event::MappingStart(anchor, _) => {
                open.push((anchor, nodes));
                nodes += 1;
                if open.len() > MAX_YAML_DEPTH {
                    return Err(at(format!("nesting deeper than {MAX_YAML_DEPTH} levels")));
                }
            }
            Event::SequenceEnd | Event::MappingEnd => {
                if let Some((anchor, start)) = open.pop() {
                    if anchor > 0 {
                        sizes.insert(anchor, nodes - start);
                    }
                }
            }
            Event::Scalar(_, _, anchor, _) => {
                nodes += 1;
                if anchor > 0 {
                    sizes.insert(anchor, 1);
                }
            }
            Event::Alias(anchor) => {
                nodes = nodes.saturating_add(sizes.get(&anchor).copied().unwrap_or(1));
            }
            _ => {}
        }
        if nodes > MAX_YAML_NODES {
            return Err(at(format!(
                "the document expands to more than {MAX_YAML_NODES} nodes (aliases included): refusing a YAML alias bomb"
            )));
        }
    }
}

/// Deserializes YAML text after [`check_yaml_bounds`].
pub fn yaml_from_str<T: DeserializeOwned>(text: &str) -> Result<T, String> {
    check_yaml_bounds(text)?;
    serde_yaml::from_str(text).map_err(|e| e.to_string())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn alias_bombs_and_deep_nesting_are_refused_quickly() {
        // Nine levels of ten-fold aliases: 10⁹ nodes from under 1 kB.
        let mut bomb = String::from("a0: &a0 [x, x, x, x, x, x, x, x, x, x]\n");
        for i in 1..9 {
            let p = i - 1;
            bomb.push_str(&format!(
                "a{i}: &a{i} [*a{p}, *a{p}, *a{p}, *a{p}, *a{p}, *a{p}, *a{p}, *a{p}, *a{p}, *a{p}]\n"
            ));
        }
        let e = check_yaml_bounds(&bomb).unwrap_err();
        assert!(e.contains("alias bomb"), "{e}");
        let deep = format!("x: {}{}", "[".repeat(100_000), "]".repeat(100_000));
        let e = check_yaml_bounds(&deep).unwrap_err();
        assert!(
            e.contains("nesting deeper") || e.contains("recursion limit"),
            "{e}"
        );
        let block: String = (0..40)
            .map(|i| format!("{}k{i}:\n", " ".repeat(i)))
            .collect();
        let e = check_yaml_bounds(&format!("{block}{}x: 1\n", " ".repeat(40))).unwrap_err();
        assert!(e.contains("nesting deeper"), "{e}");
        // Ordinary files, with a modest alias, pass.
        let ok = "base: &b { cd: 2.2, area_m2: 1.0 }\nother: *b\nlist: [1, 2, 3]\n";
        assert!(check_yaml_bounds(ok).is_ok());
        let v: serde_yaml::Value = yaml_from_str(ok).unwrap();
        assert_eq!(v["other"]["cd"], serde_yaml::Value::from(2.2));
    }

    #[test]
    fn oversized_files_are_refused_before_reading_them_whole() {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("big.yaml");
        std::fs::write(&p, vec![b'#'; 2048]).unwrap();
        assert!(read_text(&p, 1024).unwrap_err().contains("larger than"));
        assert_eq!(read_text(&p, 4096).unwrap().len(), 2048);
        std::fs::write(&p, [0x66, 0xff, 0x66]).unwrap();
        assert!(read_text(&p, 4096).unwrap_err().contains("UTF-8"));
    }

    #[test]
    fn a_file_is_parsed_once_until_it_changes_and_errors_are_not_kept() {
        use std::sync::atomic::{AtomicUsize, Ordering};
        static CALLS: AtomicUsize = AtomicUsize::new(0);
        #[derive(Debug)]
        struct Parsed(String);
        let parse = |p: &Path| {
            CALLS.fetch_add(1, Ordering::SeqCst);
            let t = std::fs::read_to_string(p).map_err(|e| e.to_string())?;
            if t.starts_with("bad") {
                return Err("bad file".to_string());
            }
            Ok(Parsed(t))
        };
        let dir = tempfile::tempdir().unwrap();
        let f = dir.path().join("eop.txt");
        std::fs::write(&f, "one").unwrap();
        assert_eq!(parsed_once(&f, parse).unwrap().0, "one");
        assert_eq!(parsed_once(&f, parse).unwrap().0, "one");
        assert_eq!(CALLS.load(Ordering::SeqCst), 1);
        // A different length is a different file.
        std::fs::write(&f, "three").unwrap();
        assert_eq!(parsed_once(&f, parse).unwrap().0, "three");
        std::fs::write(&f, "bad, longer").unwrap();
        assert!(parsed_once(&f, parse).is_err());
        assert!(parsed_once(&f, parse).is_err());
        assert_eq!(CALLS.load(Ordering::SeqCst), 4);
        assert!(parsed_once(&dir.path().join("missing"), parse).is_err());
    }
}
