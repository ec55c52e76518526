//! Helpers shared by the integration-test binaries: running the real `saddle` binary the way a
//! user would, and temporary model files.
#![allow(dead_code)]

use std::io::Write;
use std::path::PathBuf;
use std::process::{Command, Output};

/// Runs the built binary from the repository root (so `models/...` paths work), without colour.
pub fn saddle(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_saddle"))
        .args(args)
        .env("NO_COLOR", "1")
        .current_dir(env!("CARGO_MANIFEST_DIR"))
        .output()
        .expect("the test binary runs")
}

/// The exit status, or -1 when the process was killed by a signal.
pub fn code(o: &Output) -> i32 {
    o.status.code().unwrap_or(-1)
}

/// A byte stream as text, lossily.
pub fn text(b: &[u8]) -> String {
    String::from_utf8_lossy(b).into_owned()
}

/// The absolute path of a bundled model.
pub fn model_path(name: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("models")
        .join(name)
}

/// A model written to a temporary `.saddle` file (deleted when dropped).
pub fn temp_model(src: &str) -> tempfile::NamedTempFile {
    let mut f = tempfile::Builder::new()
        .suffix(".saddle")
        .tempfile()
        .expect("a temporary file");
    f.write_all(src.as_bytes())
        .expect("the temporary file is writable");
    f
}
