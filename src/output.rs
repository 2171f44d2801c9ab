//! Writing results safely: outputs are written to a temporary file beside the
//! target and renamed into place, so a reader never sees half a file, and an
//! output path that names one of the inputs is refused.

use std::fs::{self, File};
use std::io::{BufWriter, Write};
use std::path::{Path, PathBuf};

use crate::error::{Error, Result};

/// True if `a` and `b` name the same existing file (after resolving links).
fn same_file(a: &Path, b: &Path) -> bool {
    match (fs::canonicalize(a), fs::canonicalize(b)) {
        (Ok(x), Ok(y)) => x == y,
        _ => false,
    }
}

/// Refuses an output path that is one of the input files.
pub fn check_not_input(out: &Path, inputs: &[PathBuf]) -> Result<()> {
    for i in inputs {
        if i.as_os_str() != "-" && (i == out || same_file(i, out)) {
            return Err(Error::Usage(format!(
                "refusing to write {}: it is one of the input files",
                out.display()
            )));
        }
    }
    Ok(())
}

/// Writes a file atomically: `write` fills a buffered writer on a temporary
/// file in the same folder, which is then renamed over `path`. Refuses to
/// write over any of `inputs`. `-` writes to standard output instead.
pub fn write_atomic<F>(path: &Path, inputs: &[PathBuf], write: F) -> Result<()>
where
    F: FnOnce(&mut dyn Write) -> std::io::Result<()>,
{
    if path.as_os_str() == "-" {
        let stdout = std::io::stdout();
        let mut lock = stdout.lock();
        write(&mut lock).map_err(|e| Error::io("-", e))?;
        return lock.flush().map_err(|e| Error::io("-", e));
    }
    check_not_input(path, inputs)?;
    let dir = match path.parent() {
        Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
        _ => PathBuf::from("."),
    };
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| "output".into());
    let tmp = dir.join(format!(".{name}.{}.tmp", std::process::id()));
    let result = (|| -> std::io::Result<()> {
        let f = File::create(&tmp)?;
        let mut w = BufWriter::new(f);
        write(&mut w)?;
        let f = w.into_inner().map_err(|e| e.into_error())?;
        f.sync_all()?;
        fs::rename(&tmp, path)
    })();
    if let Err(e) = result {
        let _ = fs::remove_file(&tmp);
        return Err(Error::io(path, e));
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn writes_and_refuses_inputs() {
        let dir = std::env::temp_dir().join(format!("vicinal-out-{}", std::process::id()));
        fs::create_dir_all(&dir).unwrap();
        let input = dir.join("in.xyz");
        fs::write(&input, "1\n\nH 0 0 0\n").unwrap();
        let out = dir.join("out.csv");
        write_atomic(&out, std::slice::from_ref(&input), |w| {
            w.write_all(b"a,b\n")
        })
        .unwrap();
        assert_eq!(fs::read_to_string(&out).unwrap(), "a,b\n");
        let err =
            write_atomic(&input, std::slice::from_ref(&input), |w| w.write_all(b"x")).unwrap_err();
        assert!(err.to_string().contains("one of the input files"));
        assert_eq!(fs::read_to_string(&input).unwrap(), "1\n\nH 0 0 0\n");
        fs::remove_dir_all(&dir).unwrap();
    }
}
