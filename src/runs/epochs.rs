//! New epochs for a target: a new RV file is checked together with the target's data
//! (every input check, plus duplicates and conflicts against the earlier epochs), copied
//! into the target's `epochs/` folder under a new name, and listed in the target file.
//! No data file is ever edited; the target file is rewritten atomically.

use std::path::{Path, PathBuf};

use serde::Serialize;

use crate::data::{self, DataError, DataSpec};
use crate::report::write_atomic;
use crate::target::{self, TargetError};

/// Why epochs could not be added.
#[derive(Debug, thiserror::Error)]
pub enum AddError {
    /// The target file is unusable.
    #[error(transparent)]
    Target(#[from] TargetError),
    /// The new file (or the target's data with it) fails a check.
    #[error(transparent)]
    Data(#[from] DataError),
    /// The new file adds nothing.
    #[error("{0}: no new epochs")]
    Empty(PathBuf),
    /// The updated target did not read back with the expected epochs (nothing written).
    #[error(
        "the updated target reads back with {found} epochs instead of {expected}; left unchanged"
    )]
    ReadBack {
        /// Epochs expected.
        expected: usize,
        /// Epochs found.
        found: usize,
    },
    /// Copying the file or writing the target failed.
    #[error("{path}: {source}")]
    Io {
        /// File being read or written.
        path: PathBuf,
        /// The I/O error.
        source: std::io::Error,
    },
}

/// What was added.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Added {
    /// The target file (updated).
    pub target: PathBuf,
    /// The file as given.
    pub source: PathBuf,
    /// Its copy beside the target, now listed in the target file.
    pub copy: PathBuf,
    /// Epochs added.
    pub n_added: usize,
    /// Epochs per instrument after the addition.
    pub per_instrument: Vec<(String, usize)>,
}

/// A TOML basic string.
fn toml_string(s: &str) -> String {
    format!("\"{}\"", s.replace('\\', "\\\\").replace('"', "\\\""))
}

/// Adds the epochs of `new` to the target at `target_path`.
///
/// # Errors
/// [`AddError`]: an unusable target; a new file that fails a check, alone or with the
/// target's data (exact duplicates and conflicting values at the same time and
/// instrument are named with file and row); I/O errors. Nothing is written unless every
/// check passes.
pub fn add_epochs(target_path: &Path, new: &DataSpec) -> Result<Added, AddError> {
    let old = target::load(target_path)?;
    let before = data::load(&old.data)?.len();
    let mut specs = old.data.clone();
    specs.push(new.clone());
    let set = data::load(&specs)?;
    let n_added = set.len() - before;
    if n_added == 0 {
        return Err(AddError::Empty(new.path.clone()));
    }
    let io = |path: &Path| {
        let path = path.to_path_buf();
        move |source| AddError::Io { path, source }
    };
    let bytes = std::fs::read(&new.path).map_err(io(&new.path))?;
    let dir = target_path
        .parent()
        .filter(|p| !p.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    let stamp = chrono::Utc::now().format("%Y%m%dT%H%M%SZ").to_string();
    let stem = new
        .path
        .file_stem()
        .map_or_else(|| "epochs".into(), |s| s.to_string_lossy().into_owned());
    let ext = new
        .path
        .extension()
        .map(|e| format!(".{}", e.to_string_lossy()))
        .unwrap_or_default();
    let mut relative = PathBuf::from("epochs").join(format!("{stem}-{stamp}{ext}"));
    let mut k = 2;
    while dir.join(&relative).exists() {
        relative = PathBuf::from("epochs").join(format!("{stem}-{stamp}-{k}{ext}"));
        k += 1;
    }
    let copy = dir.join(&relative);
    let mut text = std::fs::read_to_string(target_path).map_err(io(target_path))?;
    if !text.ends_with('\n') {
        text.push('\n');
    }
    text.push_str(&format!(
        "\n# Added by heft add-epochs ({} epochs, {stamp}) from {}.\n[[data]]\nfile = {}\n",
        n_added,
        new.path.display(),
        toml_string(&relative.to_string_lossy())
    ));
    // Without a given instrument the loader names it after the file's stem, which the copy
    // does not keep: name it explicitly when the file's rows all took that name.
    let new_file = specs.len() - 1;
    let names: Vec<&String> = (0..set.len())
        .filter(|&j| set.origin[j].file == new_file)
        .map(|j| &set.instruments[set.instrument[j]])
        .collect();
    let instrument = new
        .instrument
        .clone()
        .or_else(|| (names.iter().all(|n| **n == stem)).then(|| stem.clone()));
    if let Some(inst) = &instrument {
        text.push_str(&format!("instrument = {}\n", toml_string(inst)));
    }
    text.push_str(&format!(
        "unit = {}\ntime = {}\n",
        toml_string(&new.unit.to_string()),
        toml_string(&new.time.to_string())
    ));
    // The new target must read back with the copy in place before it replaces the old one.
    std::fs::create_dir_all(copy.parent().unwrap_or(dir)).map_err(io(&copy))?;
    write_atomic(&copy, &bytes).map_err(io(&copy))?;
    let read_back = || -> Result<usize, AddError> {
        let t = target::parse(&text, target_path)?;
        Ok(data::load(&t.data)?.len())
    };
    match read_back() {
        Ok(n) if n == set.len() => {}
        Ok(n) => {
            let _ = std::fs::remove_file(&copy);
            return Err(AddError::ReadBack {
                expected: set.len(),
                found: n,
            });
        }
        Err(e) => {
            let _ = std::fs::remove_file(&copy);
            return Err(e);
        }
    }
    write_atomic(target_path, text.as_bytes()).map_err(io(target_path))?;
    let per_instrument = set
        .instruments
        .iter()
        .enumerate()
        .map(|(k, name)| {
            (
                name.clone(),
                set.instrument.iter().filter(|&&q| q == k).count(),
            )
        })
        .collect();
    Ok(Added {
        target: target_path.to_path_buf(),
        source: new.path.clone(),
        copy,
        n_added,
        per_instrument,
    })
}
