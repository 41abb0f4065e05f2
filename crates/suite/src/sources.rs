//! Where the scene files a suite names come from: a folder on disk, files compiled into the
//! binary, or none at all (inline scenes only).

use crate::default_suite::DEFAULT_SUITE_SCENES;
use echobench_yaml_reader::suggest;
use std::path::PathBuf;

/// Where the scene files named by a suite come from.
pub trait SceneSource {
    /// The text of the scene file written as `relative` in the suite.
    ///
    /// # Errors
    /// Why it cannot be read, in words (the message is shown to the user).
    fn read(&self, relative: &str) -> Result<String, String>;

    /// How the file is named in messages (a path the user can open).
    fn display_name(&self, relative: &str) -> String;

    /// The file on disk, for sources that have one (recordings must be real files).
    fn path(&self, relative: &str) -> Option<PathBuf> {
        let _ = relative;
        None
    }
}

/// No scene files at all: for a suite whose scenes are all written inline (a suite built in
/// code or in a test). Naming a file is refused with the file's name.
pub struct InlineOnly;

impl SceneSource for InlineOnly {
    fn read(&self, relative: &str) -> Result<String, String> {
        Err(format!(
            "no scene file `{relative}`: this suite's scenes must be written inline"
        ))
    }

    fn display_name(&self, relative: &str) -> String {
        relative.to_string()
    }
}

/// Scene files on disk, relative to the suite file's folder.
#[derive(Debug, Clone)]
pub struct FolderSource {
    folder: PathBuf,
}

impl FolderSource {
    /// Scene paths are resolved against `folder`.
    pub fn new(folder: impl Into<PathBuf>) -> Self {
        FolderSource {
            folder: folder.into(),
        }
    }

    fn path_of(&self, relative: &str) -> PathBuf {
        self.folder.join(relative)
    }
}

impl SceneSource for FolderSource {
    fn read(&self, relative: &str) -> Result<String, String> {
        let path = self.path_of(relative);
        std::fs::read_to_string(&path).map_err(|e| format!("cannot read `{}`: {e}", path.display()))
    }

    fn display_name(&self, relative: &str) -> String {
        self.path_of(relative).display().to_string()
    }

    fn path(&self, relative: &str) -> Option<PathBuf> {
        Some(self.path_of(relative))
    }
}

/// Scene files held in memory as (name, text) pairs, e.g. compiled into the binary.
#[derive(Debug, Clone, Copy)]
pub struct EmbeddedSource {
    files: &'static [(&'static str, &'static str)],
}

impl EmbeddedSource {
    /// A source serving `files`, each named as the suite names it.
    pub const fn new(files: &'static [(&'static str, &'static str)]) -> Self {
        EmbeddedSource { files }
    }

    /// The scene files of the built-in default suite.
    pub const fn default_suite() -> Self {
        EmbeddedSource::new(&DEFAULT_SUITE_SCENES)
    }
}

impl SceneSource for EmbeddedSource {
    fn read(&self, relative: &str) -> Result<String, String> {
        match self.files.iter().find(|(name, _)| *name == relative) {
            Some((_, text)) => Ok((*text).to_string()),
            None => {
                let names: Vec<&str> = self.files.iter().map(|(name, _)| *name).collect();
                let hint = suggest(relative, &names)
                    .map_or_else(String::new, |near| format!(" (did you mean `{near}`?)"));
                Err(format!(
                    "no built-in scene file `{relative}`{hint}; the built-in files are: {}",
                    names.join(", ")
                ))
            }
        }
    }

    fn display_name(&self, relative: &str) -> String {
        format!("<built-in>/{relative}")
    }
}
