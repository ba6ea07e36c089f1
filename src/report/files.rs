//! Run folders and crash-safe file writing.

use std::fs;
use std::io::{self, Write};
use std::path::{Path, PathBuf};

/// Environment variable that makes [`write_atomic`] fail on purpose, so that tests can
/// simulate a full disk or a read-only folder on any machine: `NAME[@BYTES][:KIND]`, where
/// `NAME` is a file name (or `*` for every file), `BYTES` how many bytes reach the
/// temporary file before the failure (default 0) and `KIND` `full` (default: no space
/// left) or `denied` (permission denied).
pub const FAULT_ENV: &str = "HEFT_INJECT_WRITE_FAULT";

/// The failure [`FAULT_ENV`] asks for when writing a file named `name`: bytes written
/// first, and the error.
fn injected_fault(name: &str) -> Option<(usize, io::Error)> {
    let spec = std::env::var(FAULT_ENV).ok()?;
    let (head, kind) = spec.split_once(':').unwrap_or((spec.as_str(), "full"));
    let (file, bytes) = head.split_once('@').unwrap_or((head, "0"));
    if file != "*" && file != name {
        return None;
    }
    let error = match kind {
        "denied" => io::Error::new(
            io::ErrorKind::PermissionDenied,
            "permission denied (injected fault)",
        ),
        _ => io::Error::new(
            io::ErrorKind::StorageFull,
            "no space left on device (injected fault)",
        ),
    };
    Some((bytes.parse().unwrap_or(0), error))
}

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
    let fault = injected_fault(&name.to_string_lossy());
    let result = (|| {
        let mut f = fs::File::create(&tmp)?;
        if let Some((written, error)) = fault {
            f.write_all(&bytes[..written.min(bytes.len())])?;
            return Err(error);
        }
        f.write_all(bytes)?;
        f.sync_all()?;
        fs::rename(&tmp, path)
    })();
    if result.is_err() {
        let _ = fs::remove_file(&tmp);
    }
    result
}

/// [`write_atomic`] of file `name` in `dir`, its error message naming the file.
///
/// # Errors
/// As [`write_atomic`].
pub(crate) fn write_in(dir: &Path, name: &str, bytes: &[u8]) -> io::Result<()> {
    let path = dir.join(name);
    write_atomic(&path, bytes)
        .map_err(|e| io::Error::new(e.kind(), format!("{}: {e}", path.display())))
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
