//! Run folders and crash-safe file writing.

use std::fs;
use std::io::{self, Write};
use std::path::{Path, PathBuf};

/// Writes `bytes` to `path` through a temporary file in the same folder and a rename, so
/// a reader never sees a half-written file and an earlier file survives a failed write.
///
/// # Errors
/// Any I/O error; the temporary file is removed on failure.
pub fn write_atomic(path: &Path, bytes: &[u8]) -> io::Result<()> {
    let dir = path
        .parent()
        .filter(|p| !p.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    let name = path
        .file_name()
        .ok_or_else(|| io::Error::new(io::ErrorKind::InvalidInput, "no file name"))?;
    let tmp = dir.join(format!(
        ".{}.tmp-{}",
        name.to_string_lossy(),
        std::process::id()
    ));
    let result = (|| {
        let mut f = fs::File::create(&tmp)?;
        f.write_all(bytes)?;
        f.sync_all()?;
        fs::rename(&tmp, path)
    })();
    if result.is_err() {
        let _ = fs::remove_file(&tmp);
    }
    result
}

/// Creates the folder a run writes into.
///
/// With `out`, that folder (created with its parents; refused if it exists and is not
/// empty). Without, a new folder `runs/<UTC time>` beside `target_file`, with a `-2`,
/// `-3`, … suffix if that name is taken, so earlier runs are never overwritten.
///
/// # Errors
/// I/O errors, or [`io::ErrorKind::AlreadyExists`] for a non-empty `out`.
pub fn create_run_dir(out: Option<&Path>, target_file: &Path) -> io::Result<PathBuf> {
    if let Some(dir) = out {
        if dir.exists() && fs::read_dir(dir)?.next().is_some() {
            return Err(io::Error::new(
                io::ErrorKind::AlreadyExists,
                format!(
                    "{} exists and is not empty; choose a new folder",
                    dir.display()
                ),
            ));
        }
        fs::create_dir_all(dir)?;
        return Ok(dir.to_path_buf());
    }
    let base = target_file
        .parent()
        .filter(|p| !p.as_os_str().is_empty())
        .unwrap_or(Path::new("."))
        .join("runs");
    fs::create_dir_all(&base)?;
    let stamp = chrono::Utc::now().format("%Y%m%dT%H%M%SZ").to_string();
    for n in 1.. {
        let name = if n == 1 {
            stamp.clone()
        } else {
            format!("{stamp}-{n}")
        };
        let dir = base.join(name);
        match fs::create_dir(&dir) {
            Ok(()) => return Ok(dir),
            Err(e) if e.kind() == io::ErrorKind::AlreadyExists => continue,
            Err(e) => return Err(e),
        }
    }
    unreachable!("the suffix loop only ends by returning")
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn runs_never_overwrite() {
        let tmp = tempfile::tempdir().unwrap();
        let target = tmp.path().join("t.toml");
        let a = create_run_dir(None, &target).unwrap();
        let b = create_run_dir(None, &target).unwrap();
        assert_ne!(a, b);
        write_atomic(&a.join("x.json"), b"{}").unwrap();
        assert!(create_run_dir(Some(&a), &target).is_err());
        assert_eq!(fs::read(a.join("x.json")).unwrap(), b"{}");
    }
}
