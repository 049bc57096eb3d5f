//! Writing output files: atomically (a temporary file beside the target, then a rename), and
//! never over an input or twice to one path. Every file collatio writes goes through here.

use std::path::{Path, PathBuf};

/// Why an output could not be written.
#[derive(Debug, thiserror::Error)]
pub enum OutputError {
    /// An output path names one of the input files.
    #[error("output: {path} is an input file; refusing to overwrite it")]
    WouldOverwriteInput {
        /// The output path.
        path: PathBuf,
    },
    /// Two outputs name the same file.
    #[error("output: {path} is named by two outputs")]
    SameOutputTwice {
        /// The path.
        path: PathBuf,
    },
    /// Writing a file failed.
    #[error("output: {path}: {source}")]
    Io {
        /// The file.
        path: PathBuf,
        /// The system error.
        source: std::io::Error,
    },
}

impl OutputError {
    /// Whether the error is the user's choice of paths (a usage error) rather than a failure.
    pub fn is_usage(&self) -> bool {
        matches!(
            self,
            OutputError::WouldOverwriteInput { .. } | OutputError::SameOutputTwice { .. }
        )
    }
}

/// The absolute form of a path whose file may not exist yet.
fn absolute(path: &Path) -> PathBuf {
    if let Ok(p) = std::fs::canonicalize(path) {
        return p;
    }
    let parent = path.parent().filter(|p| !p.as_os_str().is_empty());
    let base = match parent {
        Some(dir) => std::fs::canonicalize(dir).unwrap_or_else(|_| dir.to_path_buf()),
        None => std::env::current_dir().unwrap_or_default(),
    };
    match path.file_name() {
        Some(name) => base.join(name),
        None => base,
    }
}

/// Whether two paths name the same file (or would, once written).
pub fn same_file(a: &Path, b: &Path) -> bool {
    absolute(a) == absolute(b)
}

/// Refuses outputs that name an input or each other.
pub fn check_outputs(inputs: &[&Path], outputs: &[PathBuf]) -> Result<(), OutputError> {
    let inputs: Vec<PathBuf> = inputs.iter().map(|p| absolute(p)).collect();
    let mut seen: Vec<PathBuf> = Vec::new();
    for out in outputs {
        let abs = absolute(out);
        if inputs.contains(&abs) {
            return Err(OutputError::WouldOverwriteInput { path: out.clone() });
        }
        if seen.contains(&abs) {
            return Err(OutputError::SameOutputTwice { path: out.clone() });
        }
        seen.push(abs);
    }
    Ok(())
}

/// Writes bytes atomically: a temporary file beside the target, then a rename over it. The
/// target's folder is created when missing.
pub fn write_atomic(path: &Path, bytes: &[u8]) -> Result<(), OutputError> {
    use std::io::Write;
    let io = |source| OutputError::Io {
        path: path.to_path_buf(),
        source,
    };
    let dir = path
        .parent()
        .filter(|p| !p.as_os_str().is_empty())
        .map_or_else(|| PathBuf::from("."), Path::to_path_buf);
    let name = path
        .file_name()
        .map_or_else(|| "output".into(), |n| n.to_string_lossy().into_owned());
    let tmp = dir.join(format!(".{name}.{}.tmp", std::process::id()));
    let result = (|| {
        std::fs::create_dir_all(&dir)?;
        let mut file = std::fs::File::create(&tmp)?;
        file.write_all(bytes)?;
        file.sync_all()?;
        std::fs::rename(&tmp, path)
    })();
    if let Err(e) = result {
        let _ = std::fs::remove_file(&tmp);
        return Err(io(e));
    }
    Ok(())
}

/// Writes one output for inputs `inputs`: refused when it names one of them, else atomic.
pub fn write_output(inputs: &[&Path], path: &Path, bytes: &[u8]) -> Result<(), OutputError> {
    check_outputs(inputs, &[path.to_path_buf()])?;
    write_atomic(path, bytes)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn outputs_never_replace_inputs() {
        let dir = tempfile::tempdir().unwrap();
        let input = dir.path().join("a.mid");
        std::fs::write(&input, b"x").unwrap();
        let err = check_outputs(&[&input], &[dir.path().join("./a.mid")]).unwrap_err();
        assert!(err.is_usage());
        assert!(check_outputs(&[&input], &[dir.path().join("b.pdf")]).is_ok());
        assert!(check_outputs(
            &[&input],
            &[dir.path().join("b.pdf"), dir.path().join("b.pdf")]
        )
        .is_err());
        assert!(write_output(&[&input], &input, b"y").is_err());
        assert_eq!(std::fs::read(&input).unwrap(), b"x");
    }
}
