//! Output paths that must not be inputs: a run never overwrites what it reads, nor
//! writes two outputs to one file (`learn --arc a.csv --out a.csv` used to destroy the
//! arc and exit 0).

use crate::error::CliError;
use std::path::{Path, PathBuf};

/// What identifies a file: its canonical path, and on Unix its device and inode when it
/// exists (so a hard link or a second spelling of the same file is caught).
#[derive(PartialEq)]
struct Identity {
    canonical: PathBuf,
    inode: Option<(u64, u64)>,
}

fn identity(path: &Path) -> Identity {
    let canonical = std::fs::canonicalize(path).unwrap_or_else(|_| {
        // Not there yet: the canonical folder plus the name.
        let parent = path
            .parent()
            .filter(|p| !p.as_os_str().is_empty())
            .unwrap_or(Path::new("."));
        let name = path.file_name().map(PathBuf::from).unwrap_or_default();
        std::fs::canonicalize(parent)
            .unwrap_or_else(|_| parent.to_path_buf())
            .join(name)
    });
    #[cfg(unix)]
    let inode = {
        use std::os::unix::fs::MetadataExt;
        std::fs::metadata(path).ok().map(|m| (m.dev(), m.ino()))
    };
    #[cfg(not(unix))]
    let inode = None;
    Identity { canonical, inode }
}

fn same(a: &Identity, b: &Identity) -> bool {
    a.canonical == b.canonical || (a.inode.is_some() && a.inode == b.inode)
}

/// The paths actually given among optional ones (`--report`, `--plot`), with their
/// option names, for [`check_distinct`].
pub fn given<'a>(items: &[(&'a str, Option<&'a Path>)]) -> Vec<(&'a str, &'a Path)> {
    items
        .iter()
        .filter_map(|(o, p)| p.map(|p| (*o, p)))
        .collect()
}

/// Refuses a run whose outputs coincide with one of its inputs or with each other.
/// Each path comes with the option (or role) that named it, for the message.
pub fn check_distinct(inputs: &[(&str, &Path)], outputs: &[(&str, &Path)]) -> Result<(), CliError> {
    let ins: Vec<(&str, &Path, Identity)> =
        inputs.iter().map(|(o, p)| (*o, *p, identity(p))).collect();
    let outs: Vec<(&str, &Path, Identity)> =
        outputs.iter().map(|(o, p)| (*o, *p, identity(p))).collect();
    for (i, (oo, op, oid)) in outs.iter().enumerate() {
        if let Some((io, ip, _)) = ins.iter().find(|(_, _, id)| same(id, oid)) {
            return Err(CliError::input(format!(
                "{oo} {} is the input {io} {}: refusing to overwrite an input (choose another output path)",
                op.display(),
                ip.display()
            )));
        }
        if let Some((o2, p2, _)) = outs[..i].iter().find(|(_, _, id)| same(id, oid)) {
            return Err(CliError::input(format!(
                "{oo} {} and {o2} {} are the same file: give each output its own path",
                op.display(),
                p2.display()
            )));
        }
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn outputs_that_are_inputs_or_each_other_are_refused() {
        let dir = tempfile::tempdir().unwrap();
        let arc = dir.path().join("a.csv");
        std::fs::write(&arc, "x").unwrap();
        let other = dir.path().join("sub/../a.csv");
        std::fs::create_dir(dir.path().join("sub")).unwrap();
        let e = check_distinct(&[("--arc", &arc)], &[("--out", &other)]).unwrap_err();
        assert!(
            e.message.contains("--out") && e.message.contains("--arc"),
            "{}",
            e.message
        );
        #[cfg(unix)]
        {
            let link = dir.path().join("hard.csv");
            std::fs::hard_link(&arc, &link).unwrap();
            assert!(check_distinct(&[("--arc", &arc)], &[("--out", &link)]).is_err());
        }
        let r = dir.path().join("r.json");
        assert!(check_distinct(&[("--arc", &arc)], &[("--out", &r), ("--report", &r)]).is_err());
        let fine = dir.path().join("b.csv");
        assert!(check_distinct(&[("--arc", &arc)], &[("--out", &fine), ("--report", &r)]).is_ok());
    }
}
