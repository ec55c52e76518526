//! Where output goes: stdout (a closed pipe ends quietly; any other failed write is an error) or
//! a file written atomically (a temporary file beside the target, then a rename), never left
//! half-written.
//!
//! Contract of [`write_atomic`]:
//! - the temporary file has a short name (`.saddle-PID-N.tmp`), so any legal target name works;
//! - a symbolic link is written through: its target is replaced, the link stays;
//! - an existing file keeps its permissions;
//! - a target that is not a regular file (a device such as `/dev/null`, a named pipe) is written
//!   directly, since it cannot be replaced by a rename;
//! - an interrupt (Ctrl-C, SIGTERM) removes the temporary files in flight before the process
//!   ends (see [`install_interrupt_cleanup`]).

use std::fs;
use std::io::{self, Write};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicUsize, Ordering};
use std::sync::Mutex;

use super::Failure;

/// Temporary files being written, removed by the interrupt handler.
static IN_FLIGHT: Mutex<Vec<PathBuf>> = Mutex::new(Vec::new());
/// Numbers temporary files within this process.
static COUNTER: AtomicUsize = AtomicUsize::new(0);
/// Exit status after an interrupt (128 + SIGINT, common practice for shells).
const INTERRUPTED: i32 = 130;

/// Installs a handler for Ctrl-C and SIGTERM that removes every temporary file in flight and
/// ends the process with status 130. Called once by `main`; a failure to install leaves the
/// default behaviour (the process ends, a temporary file may stay).
pub fn install_interrupt_cleanup() {
    let _ = ctrlc::set_handler(|| {
        remove_in_flight();
        std::process::exit(INTERRUPTED);
    });
}

/// Removes the temporary files in flight (also used by other writers' cleanup).
fn remove_in_flight() {
    if let Ok(mut files) = IN_FLIGHT.lock() {
        for f in files.drain(..) {
            let _ = fs::remove_file(f);
        }
    }
}

/// Writes a rendered output with its provenance (cli.md): JSON gains a `"provenance"` object,
/// text ends with the provenance line, and a CSV written to a file gets `PATH.json` beside it
/// (stdout CSV stays a plain table). Returns what [`emit`] returns.
pub fn emit_traced(
    path: Option<&Path>,
    format: super::args::Format,
    text: &str,
    provenance: &saddle::output::provenance::Provenance,
) -> Result<(), Failure> {
    use super::args::Format;
    match format {
        Format::Json => emit(path, provenance.add_to_json(text).as_bytes()),
        Format::Text => {
            let mut t = text.trim_end().to_string();
            t.push_str("\n\n");
            t.push_str(&provenance.text_line());
            t.push('\n');
            emit(path, t.as_bytes())
        }
        Format::Csv => {
            emit(path, text.as_bytes())?;
            if let Some(p) = path {
                let mut side = p.as_os_str().to_owned();
                side.push(".json");
                let mut doc = serde_json::to_string_pretty(&serde_json::json!({
                    "provenance": provenance.json()
                }))
                .unwrap_or_default();
                doc.push('\n');
                write_atomic(Path::new(&side), doc.as_bytes())?;
            }
            Ok(())
        }
    }
}

/// Writes `bytes` to `path` atomically, or to stdout when `path` is `None`.
pub fn emit(path: Option<&Path>, bytes: &[u8]) -> Result<(), Failure> {
    match path {
        None => write_stdout(bytes),
        Some(p) => write_atomic(p, bytes),
    }
}

/// Writes to stdout. A broken pipe (`saddle ... | head`) ends quietly; any other failure (a full
/// disk, `> /dev/full`) is an error, so that a lost output never exits 0.
pub fn write_stdout(bytes: &[u8]) -> Result<(), Failure> {
    let mut out = io::stdout().lock();
    match out.write_all(bytes).and_then(|_| out.flush()) {
        Ok(()) => Ok(()),
        Err(e) if e.kind() == io::ErrorKind::BrokenPipe => Ok(()),
        Err(e) => Err(Failure::usage(format!(
            "cannot write to standard output: {e}"
        ))),
    }
}

/// Prints a line to stderr, ignoring a closed stderr.
pub fn eprintln_quiet(line: &str) {
    let mut err = io::stderr().lock();
    let _ = writeln!(err, "{line}");
}

/// Writes `bytes` to `path` as the module doc says: a temporary file in the target's folder,
/// synced, then renamed over the target (through symbolic links, keeping permissions), or
/// directly for a target that is not a regular file.
pub fn write_atomic(path: &Path, bytes: &[u8]) -> Result<(), Failure> {
    let fail = |what: &str, e: io::Error| {
        Failure::usage(format!("cannot write {}: {what}: {e}", path.display()))
    };
    // Write through a symbolic link to the file it names.
    let target = match fs::symlink_metadata(path) {
        Ok(m) if m.file_type().is_symlink() => fs::canonicalize(path).unwrap_or_else(|_| {
            // A link to a file that does not exist yet: create the file it names.
            match fs::read_link(path) {
                Ok(t) if t.is_absolute() => t,
                Ok(t) => path.parent().map(|d| d.join(&t)).unwrap_or(t),
                Err(_) => path.to_path_buf(),
            }
        }),
        _ => path.to_path_buf(),
    };
    let existing = fs::metadata(&target).ok();
    if let Some(m) = &existing {
        if m.is_dir() {
            return Err(Failure::usage(format!(
                "cannot write {}: it is a folder",
                path.display()
            )));
        }
        if !m.is_file() {
            // A device or a named pipe: no rename can replace it; write to it directly.
            let mut f = fs::OpenOptions::new()
                .write(true)
                .open(&target)
                .map_err(|e| fail("opening", e))?;
            return f.write_all(bytes).map_err(|e| fail("writing", e));
        }
    }
    let dir = match target.parent() {
        Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
        _ => Path::new(".").to_path_buf(),
    };
    let tmp = dir.join(format!(
        ".saddle-{}-{}.tmp",
        std::process::id(),
        COUNTER.fetch_add(1, Ordering::Relaxed)
    ));
    if let Ok(mut files) = IN_FLIGHT.lock() {
        files.push(tmp.clone());
    }
    let result = (|| {
        let mut f = fs::File::create(&tmp).map_err(|e| fail("creating a temporary file", e))?;
        f.write_all(bytes).map_err(|e| fail("writing", e))?;
        if let Some(m) = &existing {
            f.set_permissions(m.permissions())
                .map_err(|e| fail("keeping the file's permissions", e))?;
        }
        f.sync_all().map_err(|e| fail("syncing", e))?;
        drop(f);
        fs::rename(&tmp, &target).map_err(|e| fail("renaming the temporary file", e))
    })();
    if result.is_err() {
        let _ = fs::remove_file(&tmp);
    }
    if let Ok(mut files) = IN_FLIGHT.lock() {
        files.retain(|f| f != &tmp);
    }
    result
}
