//! `plugins:` entries and how they are resolved (native libraries, or other kinds a
//! resolver knows, such as learned-force files).

use super::*;

/// Turns a `plugins:` entry into a force, for kinds other than native libraries.
pub trait PluginResolver {
    /// `None` when the entry is not of this resolver's kind (it is then loaded as a
    /// native plugin); otherwise the force or a sentence saying why not. `host` is the
    /// forces file the entry is listed in, and its path, for forces that use its models.
    fn resolve(
        &self,
        path: &Path,
        checksum: Option<&str>,
        reference: &Epoch,
        host: (&ForcesFile, &Path),
    ) -> Option<Result<Box<dyn crate::force::Force>, String>>;
}

/// Resolves nothing: every plugin entry is a native library.
pub struct NativeOnly;

impl PluginResolver for NativeOnly {
    fn resolve(
        &self,
        _p: &Path,
        _c: Option<&str>,
        _r: &Epoch,
        _h: (&ForcesFile, &Path),
    ) -> Option<Result<Box<dyn crate::force::Force>, String>> {
        None
    }
}

/// One entry of `plugins:`.
#[derive(Clone, Debug, Deserialize, PartialEq)]
#[serde(untagged)]
pub enum PluginSpec {
    /// Just a path.
    Path(String),
    /// A path and the checksum its metadata must carry.
    Checked {
        /// The plugin file.
        path: String,
        /// `sha256:<hex>` the plugin's `source_checksum` must equal.
        source_checksum: Option<String>,
    },
}

impl PluginSpec {
    /// The path as written.
    pub fn path(&self) -> &str {
        match self {
            PluginSpec::Path(p) => p,
            PluginSpec::Checked { path, .. } => path,
        }
    }

    /// The required checksum, if any.
    pub fn checksum(&self) -> Option<&str> {
        match self {
            PluginSpec::Path(_) => None,
            PluginSpec::Checked {
                source_checksum, ..
            } => source_checksum.as_deref(),
        }
    }
}
