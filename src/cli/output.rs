//! Where output goes: stdout (a closed pipe ends quietly) or a file written atomically
//! (a temporary file beside the target, then a rename), never left half-written.

use std::fs;
use std::io::{self, Write};
use std::path::Path;

use super::Failure;

/// Writes `bytes` to `path` atomically, or to stdout when `path` is `None`.
pub fn emit(path: Option<&Path>, bytes: &[u8]) -> Result<(), Failure> {
    match path {
        None => {
            write_stdout(bytes);
            Ok(())
        }
        Some(p) => write_atomic(p, bytes),
    }
}

/// Writes to stdout; a broken pipe (`saddle ... | head`) ends quietly.
pub fn write_stdout(bytes: &[u8]) {
    let mut out = io::stdout().lock();
    match out.write_all(bytes).and_then(|_| out.flush()) {
        Ok(()) => {}
        Err(e) if e.kind() == io::ErrorKind::BrokenPipe => {}
        Err(_) => {}
    }
}

/// Prints a line to stderr, ignoring a closed stderr.
pub fn eprintln_quiet(line: &str) {
    let mut err = io::stderr().lock();
    let _ = writeln!(err, "{line}");
}

/// Writes `bytes` to a temporary file in `path`'s folder, syncs it, then renames it over `path`.
pub fn write_atomic(path: &Path, bytes: &[u8]) -> Result<(), Failure> {
    let dir = match path.parent() {
        Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
        _ => Path::new(".").to_path_buf(),
    };
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| "output".to_string());
    let tmp = dir.join(format!(".{name}.saddle-tmp-{}", std::process::id()));
    let fail = |e: io::Error, what: &str| {
        let _ = fs::remove_file(&tmp);
        Failure::usage(format!("cannot write {}: {what}: {e}", path.display()))
    };
    let mut f = fs::File::create(&tmp).map_err(|e| fail(e, "creating a temporary file"))?;
    f.write_all(bytes).map_err(|e| fail(e, "writing"))?;
    f.sync_all().map_err(|e| fail(e, "syncing"))?;
    drop(f);
    fs::rename(&tmp, path).map_err(|e| fail(e, "renaming the temporary file"))?;
    Ok(())
}
