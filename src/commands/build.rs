//! `arcwise build`: a learned-force file → a native force plugin (cdylib).

use crate::error::CliError;
use clap::Args as ClapArgs;
use learned_forces::codegen::build;
use learned_forces::learned_file::LearnedFile;
use std::path::PathBuf;

/// Options of `arcwise build`.
#[derive(ClapArgs, Debug)]
pub struct Args {
    /// The learned-force file.
    #[arg(value_name = "LEARNED.yaml")]
    learned: PathBuf,
    /// The plugin to write (e.g. libvent.so).
    #[arg(long, value_name = "PLUGIN.so")]
    out: PathBuf,
    /// The plugin's name in its metadata (default: the learned file's name).
    #[arg(long)]
    name: Option<String>,
    /// Keep the generated crate beside the plugin (PLUGIN.so.src/) for review.
    #[arg(long)]
    keep_source: bool,
}

/// Runs the command.
pub fn run(a: Args) -> Result<(), CliError> {
    crate::paths::check_distinct(&[("LEARNED.yaml", &a.learned)], &[("--out", &a.out)])?;
    let file = LearnedFile::load(&a.learned).map_err(CliError::input)?;
    let name = a.name.clone().unwrap_or_else(|| file.name.clone());
    propagator::text::check_name("--name", &name).map_err(CliError::input)?;
    // The crate is generated in a folder created exclusively and private to the user:
    // PLUGIN.so.src/ with --keep-source (refused if it exists), otherwise a fresh
    // random folder in the temporary directory, removed on every exit path.
    let scratch = if a.keep_source {
        None
    } else {
        Some(
            tempfile::Builder::new()
                .prefix("arcwise-build-")
                .tempdir()
                .map_err(|e| CliError::input(format!("cannot create a build folder: {e}")))?,
        )
    };
    let _registered = scratch
        .as_ref()
        .map(|t| propagator::cleanup::Registered::new(t.path()));
    let src_dir = match &scratch {
        Some(t) => t.path().join("crate"),
        None => {
            let mut p = a.out.clone().into_os_string();
            p.push(".src");
            PathBuf::from(p)
        }
    };
    let built = build(&file, &name, &src_dir)
        .map_err(|e| CliError::input(format!("{}: {e}", a.learned.display())))?;
    let bytes =
        std::fs::read(&built).map_err(|e| CliError::input(format!("{}: {e}", built.display())))?;
    propagator::ephemeris::write_atomically(&a.out, &bytes).map_err(CliError::input)?;
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        std::fs::set_permissions(&a.out, std::fs::Permissions::from_mode(0o755))
            .map_err(|e| CliError::input(format!("{}: {e}", a.out.display())))?;
    }
    println!(
        "built {} from {} ({} terms, checksum {}){}",
        a.out.display(),
        a.learned.display(),
        file.terms.len(),
        file.checksum,
        if a.keep_source {
            format!("; source in {}", src_dir.display())
        } else {
            String::new()
        }
    );
    Ok(())
}
