//! Reading a model file and turning it into a checked model, printing diagnostics on failure.
//!
//! Contract: [`load_model`] returns the checked model and its source text, or a [`Failure`]:
//! exit 2 when the file cannot be read (a wrong path is a command-line mistake), exit 1 when it is
//! not a text model file (binary, not UTF-8, too large) or does not check, in which case every
//! diagnostic has already been printed to stderr as a miette report naming the file (coloured
//! only on a terminal and never when `NO_COLOR` is set).

use std::io::{IsTerminal, Read};
use std::path::Path;

use saddle::language::diagnostics::{self, Colour};
use saddle::language::parser::MAX_SOURCE_BYTES;
use saddle::model::{check_source, Model};

use super::output::eprintln_quiet;
use super::{Failure, Outcome};

/// Whether reports on stderr may use colour: only on a terminal, and never with `NO_COLOR` set
/// to a non-empty value (the convention of no-color.org).
pub fn stderr_colour() -> Colour {
    let no_color = std::env::var_os("NO_COLOR").is_some_and(|v| !v.is_empty());
    if !no_color && std::io::stderr().is_terminal() {
        Colour::Always
    } else {
        Colour::Never
    }
}

/// Reads `path` as model text: at most [`MAX_SOURCE_BYTES`], no NUL bytes, valid UTF-8.
pub fn read_model_text(path: &Path) -> Result<String, Failure> {
    let shown = path.display();
    let mut bytes = Vec::new();
    if path.as_os_str() == "-" {
        // The model on standard input (`saddle check -`).
        std::io::stdin()
            .lock()
            .take(MAX_SOURCE_BYTES as u64 + 1)
            .read_to_end(&mut bytes)
            .map_err(|e| Failure::usage(format!("cannot read standard input: {e}")))?;
    } else {
        // Only a regular file: opening a named pipe would wait for a writer forever, and a
        // device could stream without end.
        let meta = std::fs::metadata(path)
            .map_err(|e| Failure::usage(format!("cannot read {shown}: {e}")))?;
        if !meta.is_file() {
            return Err(Failure::usage(format!(
                "cannot read {shown}: it is not a regular file (use `-` to read a model from standard input)"
            )));
        }
        let file = std::fs::File::open(path)
            .map_err(|e| Failure::usage(format!("cannot read {shown}: {e}")))?;
        file.take(MAX_SOURCE_BYTES as u64 + 1)
            .read_to_end(&mut bytes)
            .map_err(|e| Failure::usage(format!("cannot read {shown}: {e}")))?;
    }
    if bytes.len() > MAX_SOURCE_BYTES {
        return Err(Failure::new(
            Outcome::ModelError,
            format!(
                "{shown} is larger than {MAX_SOURCE_BYTES} bytes; that is not a model file saddle reads"
            ),
        ));
    }
    if let Some(at) = bytes.iter().position(|&b| b == 0) {
        return Err(Failure::new(
            Outcome::ModelError,
            format!(
                "{shown} is not a text model file (it holds binary data: a NUL byte at byte {at})"
            ),
        ));
    }
    String::from_utf8(bytes).map_err(|e| {
        let at = e.utf8_error().valid_up_to();
        let before = &e.as_bytes()[..at];
        let line = 1 + before.iter().filter(|&&b| b == b'\n').count();
        Failure::new(
            Outcome::ModelError,
            format!(
                "{shown} is not a text model file: it is not valid UTF-8 (first bad byte at line {line}, byte {at})"
            ),
        )
    })
}

/// Reads and checks the model at `path`; see the module documentation.
pub fn load_model(path: &Path) -> Result<(Model, String), Failure> {
    let source = read_model_text(path)?;
    match check_source(&source) {
        Ok(model) => Ok((model, source)),
        Err(diags) => {
            let name = path.display().to_string();
            let text = diagnostics::render(&diags, &name, &source, stderr_colour());
            eprintln_quiet(text.trim_end());
            let n = diags.iter().filter(|d| d.is_error()).count();
            eprintln_quiet(&format!(
                "error: {name}: {n} problem{} found; the model was not checked",
                if n == 1 { "" } else { "s" }
            ));
            Err(Failure::model_reported())
        }
    }
}
