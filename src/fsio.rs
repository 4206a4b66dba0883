//! Writing files so that nothing is ever left half written.
//!
//! Every file furrow writes goes to a temporary name in the same folder and
//! is renamed into place, so an interrupted run leaves the previous file (or
//! no file) but never a truncated one. An output file is never one of the
//! files the run reads ([`refuse_inputs`]).

use crate::error::{Error, Result};
use std::fs;
use std::io::Write;
use std::path::{Path, PathBuf};

fn tmp_name(path: &Path) -> PathBuf {
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().to_string())
        .unwrap_or_default();
    path.with_file_name(format!(".{name}.tmp-{}", std::process::id()))
}

/// Writes `bytes` to `path` through a temporary file and a rename.
pub fn write_atomic(path: &Path, bytes: &[u8]) -> Result<()> {
    let werr = |source| Error::Write {
        path: path.to_path_buf(),
        source,
    };
    if let Some(dir) = path.parent().filter(|d| !d.as_os_str().is_empty()) {
        fs::create_dir_all(dir).map_err(werr)?;
    }
    let tmp = tmp_name(path);
    let result = (|| {
        let mut f = fs::File::create(&tmp)?;
        f.write_all(bytes)?;
        f.sync_all()?;
        fs::rename(&tmp, path)
    })();
    if result.is_err() {
        let _ = fs::remove_file(&tmp);
    }
    result.map_err(werr)
}

/// Writes `text` to `path` atomically.
pub fn write_text(path: &Path, text: &str) -> Result<()> {
    write_atomic(path, text.as_bytes())
}

/// Refuses to write `path` (for `flag`) when it is one of the files the run
/// reads: writing it would replace the user's input.
pub fn refuse_inputs(path: &Path, inputs: &[PathBuf], flag: &str) -> Result<()> {
    let Ok(target) = fs::canonicalize(path) else {
        return Ok(()); // Not there yet: nothing to replace.
    };
    for p in inputs {
        if fs::canonicalize(p).is_ok_and(|input| input == target) {
            return Err(Error::Output {
                what: "the output",
                path: path.to_path_buf(),
                message: format!(
                    "it is {}, which this run reads; give {flag} a file name of its own",
                    p.display()
                ),
            });
        }
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn an_output_that_is_an_input_is_refused() {
        let t = tempfile::tempdir().expect("tmp");
        let input = t.path().join("keywords.csv");
        fs::write(&input, b"k").expect("write");
        let inputs = vec![input.clone()];
        let again = t.path().join(".").join("keywords.csv");
        let e = refuse_inputs(&again, &inputs, "--out").expect_err("refused");
        assert!(e.to_string().contains("which this run reads"), "{e}");
        assert!(refuse_inputs(&t.path().join("new.csv"), &inputs, "--out").is_ok());
    }
}
