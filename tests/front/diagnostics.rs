//! Diagnostics through the real binary: every file in tests/diagnostics/ carries annotations
//!
//! ```text
//! # error LINE:COLUMN: part of the message
//! # also: text that must appear in the same report (a label or the help)
//! ```
//!
//! above the offending line. `saddle check FILE` must exit with status 1, print nothing on
//! stdout, and print exactly one report per annotation on stderr, each with the message and a
//! `[file:LINE:COLUMN]` header. The same files are also checked in-process, where the primary
//! span's line and column must equal the annotation's.

use std::path::{Path, PathBuf};
use std::process::Command;

use saddle::language::line_col;
use saddle::model::check_source;

#[derive(Debug)]
struct Expected {
    line: usize,
    col: usize,
    message: String,
    also: Vec<String>,
}

fn annotations(src: &str) -> Vec<Expected> {
    let mut out: Vec<Expected> = Vec::new();
    for l in src.lines() {
        let l = l.trim_start();
        if let Some(rest) = l.strip_prefix("# error ") {
            let (pos, message) = rest.split_once(": ").expect("`# error L:C: message`");
            let (line, col) = pos.split_once(':').expect("L:C");
            out.push(Expected {
                line: line.parse().unwrap(),
                col: col.parse().unwrap(),
                message: message.trim().to_string(),
                also: Vec::new(),
            });
        } else if let Some(rest) = l.strip_prefix("# also: ") {
            out.last_mut()
                .expect("`# also` follows an `# error`")
                .also
                .push(rest.trim().to_string());
        }
    }
    out
}

struct Report {
    message: String,
    positions: Vec<(usize, usize)>,
    body: String,
}

/// Splits miette's graphical output into reports (each starts with a `×` line).
fn reports(stderr: &str) -> Vec<Report> {
    let mut out: Vec<Report> = Vec::new();
    for line in stderr.lines() {
        let t = line.trim_start();
        if let Some(m) = t.strip_prefix("× ") {
            out.push(Report {
                message: m.to_string(),
                positions: Vec::new(),
                body: String::new(),
            });
            continue;
        }
        let Some(r) = out.last_mut() else { continue };
        r.body.push_str(line);
        r.body.push('\n');
        if let (Some(a), Some(b)) = (line.find('['), line.rfind(']')) {
            if a < b {
                let inner = &line[a + 1..b];
                let parts: Vec<&str> = inner.rsplitn(3, ':').collect();
                if parts.len() == 3 {
                    if let (Ok(c), Ok(l)) = (parts[0].parse(), parts[1].parse()) {
                        r.positions.push((l, c));
                    }
                }
            }
        }
    }
    out
}

fn diagnostic_files() -> Vec<PathBuf> {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/diagnostics");
    let mut v: Vec<PathBuf> = std::fs::read_dir(&dir)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|x| x == "saddle"))
        .collect();
    v.sort();
    assert!(
        v.len() >= 20,
        "expected the annotated files in {}",
        dir.display()
    );
    v
}

#[test]
fn every_annotated_file_gives_its_diagnostics_through_the_binary() {
    let mut failures = Vec::new();
    for path in diagnostic_files() {
        let src = std::fs::read_to_string(&path).unwrap();
        let expected = annotations(&src);
        assert!(!expected.is_empty(), "{}: no annotations", path.display());
        let out = Command::new(env!("CARGO_BIN_EXE_saddle"))
            .arg("check")
            .arg(&path)
            .env("NO_COLOR", "1")
            .output()
            .unwrap();
        let name = path.file_name().unwrap().to_string_lossy().into_owned();
        let stderr = String::from_utf8_lossy(&out.stderr).into_owned();
        if out.status.code() != Some(1) {
            failures.push(format!(
                "{name}: exit status {:?}, expected 1",
                out.status.code()
            ));
        }
        if !out.stdout.is_empty() {
            failures.push(format!("{name}: printed on stdout"));
        }
        if stderr.contains('\u{1b}') {
            failures.push(format!("{name}: colour codes despite NO_COLOR"));
        }
        let mut reps = reports(&stderr);
        if reps.len() != expected.len() {
            failures.push(format!(
                "{name}: {} reports, {} annotations\n{stderr}",
                reps.len(),
                expected.len()
            ));
        }
        for e in &expected {
            let found = reps.iter().position(|r| {
                r.message.contains(&e.message)
                    && r.positions.contains(&(e.line, e.col))
                    && e.also.iter().all(|a| r.body.contains(a.as_str()))
            });
            match found {
                Some(i) => {
                    reps.remove(i);
                }
                None => failures.push(format!(
                    "{name}: no report `{}` at {}:{} (with {:?})\n{stderr}",
                    e.message, e.line, e.col, e.also
                )),
            }
        }
    }
    assert!(failures.is_empty(), "{}", failures.join("\n\n"));
}

#[test]
fn every_annotated_file_has_its_spans_in_process() {
    for path in diagnostic_files() {
        let src = std::fs::read_to_string(&path).unwrap();
        let expected = annotations(&src);
        let diags = check_source(&src).expect_err("an annotated file must not check");
        assert_eq!(
            diags.len(),
            expected.len(),
            "{}: {diags:#?}",
            path.display()
        );
        for e in &expected {
            assert!(
                diags.iter().any(|d| d.message.contains(&e.message)
                    && line_col(&src, d.span.start) == (e.line, e.col)),
                "{}: no diagnostic `{}` at {}:{}: {diags:#?}",
                path.display(),
                e.message,
                e.line,
                e.col
            );
        }
    }
}

#[test]
fn a_good_model_exits_zero_with_a_summary_and_json() {
    let model = Path::new(env!("CARGO_MANIFEST_DIR")).join("models/harbour.saddle");
    let out = Command::new(env!("CARGO_BIN_EXE_saddle"))
        .args(["check"])
        .arg(&model)
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(0));
    let text = String::from_utf8(out.stdout).unwrap();
    assert!(text.starts_with("Harbour economy"));
    assert!(text.contains("kappa"));
    let out = Command::new(env!("CARGO_BIN_EXE_saddle"))
        .args(["check", "--format", "json"])
        .arg(&model)
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(0));
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(v["endogenous"][3]["name"], "drift");
    assert_eq!(v["endogenous"][3]["max_lag"], 1);
    assert_eq!(v["endogenous"][0]["max_lead"], 1);
    assert_eq!(v["endogenous"][0]["log"], false);
    assert_eq!(v["parameters"]["beta"], 0.99);
    assert_eq!(v["equations"][0]["label"], "demand");
    assert_eq!(
        v["equations"][0]["text"],
        "gap = gap[t+1] - (rate - infl[t+1]) / sigma"
    );
    assert_eq!(v["exogenous"][0]["sd"], 0.25);
}

#[test]
fn canonical_output_written_to_a_file_checks_again() {
    let dir = tempfile::tempdir().unwrap();
    let target = dir.path().join("canon.saddle");
    let model = Path::new(env!("CARGO_MANIFEST_DIR")).join("models/island_growth.saddle");
    let out = Command::new(env!("CARGO_BIN_EXE_saddle"))
        .args(["check", "--format", "canonical", "-o"])
        .arg(&target)
        .arg(&model)
        .output()
        .unwrap();
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    assert!(out.stdout.is_empty());
    let printed = std::fs::read_to_string(&target).unwrap();
    let original = check_source(&std::fs::read_to_string(&model).unwrap()).unwrap();
    assert_eq!(check_source(&printed).unwrap(), original);
}

#[test]
fn binary_and_non_utf8_files_are_not_text_model_files() {
    let dir = tempfile::tempdir().unwrap();
    let bin = dir.path().join("image.saddle");
    std::fs::write(&bin, [0x89, b'P', b'N', b'G', 0, 0, 0, 13, 0xff, 0xfe]).unwrap();
    let latin = dir.path().join("latin1.saddle");
    std::fs::write(&latin, b"title \"caf\xe9\"\n").unwrap();
    for p in [&bin, &latin] {
        let out = Command::new(env!("CARGO_BIN_EXE_saddle"))
            .arg("check")
            .arg(p)
            .output()
            .unwrap();
        assert_eq!(out.status.code(), Some(1));
        let err = String::from_utf8_lossy(&out.stderr);
        assert!(err.contains("not a text model file"), "{err}");
    }
}

#[test]
fn a_missing_file_is_a_command_line_error() {
    let out = Command::new(env!("CARGO_BIN_EXE_saddle"))
        .args(["check", "/nonexistent/model.saddle"])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("cannot read"));
}

#[test]
fn a_closed_stdout_pipe_ends_quietly() {
    // `saddle check ... | head -1`: output larger than a pipe buffer into a pipe whose reader
    // has gone must not panic.
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("big.saddle");
    let mut src = String::from("endogenous\n");
    for i in 0..3000 {
        src.push_str(&format!(
            "  x{i} \"a variable with a long label to make the output large\"\n"
        ));
    }
    src.push_str("equations\n");
    for i in 0..3000 {
        src.push_str(&format!("  x{i} = 0.5 * x{i}[t-1]\n"));
    }
    std::fs::write(&path, src).unwrap();
    let mut child = Command::new(env!("CARGO_BIN_EXE_saddle"))
        .arg("check")
        .arg(&path)
        .stdout(std::process::Stdio::piped())
        .stderr(std::process::Stdio::piped())
        .spawn()
        .unwrap();
    drop(child.stdout.take());
    let out = child.wait_with_output().unwrap();
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(!err.contains("panicked"), "{err}");
    assert_eq!(out.status.code(), Some(0), "{err}");
}

/// Every diagnostic code written in the library's source, with where: the string literal that
/// follows `Diagnostic::error(`, `Diagnostic::warning(` or `report_unknown(` (whose first
/// argument is the code), or is assigned to `.code`.
fn codes_in_source() -> Vec<(String, String)> {
    fn walk(dir: &Path, out: &mut Vec<PathBuf>) {
        for e in std::fs::read_dir(dir).unwrap() {
            let p = e.unwrap().path();
            if p.is_dir() {
                walk(&p, out);
            } else if p.extension().is_some_and(|x| x == "rs") {
                out.push(p);
            }
        }
    }
    let mut files = Vec::new();
    walk(
        &Path::new(env!("CARGO_MANIFEST_DIR")).join("src"),
        &mut files,
    );
    let mut out = Vec::new();
    for f in files {
        let text = std::fs::read_to_string(&f).unwrap();
        for marker in [
            "Diagnostic::error(",
            "Diagnostic::warning(",
            "report_unknown(",
            ".code = ",
        ] {
            let mut rest = text.as_str();
            while let Some(i) = rest.find(marker) {
                rest = &rest[i + marker.len()..];
                let t = rest.trim_start();
                if let Some(lit) = t.strip_prefix('"') {
                    let code = &lit[..lit.find('"').unwrap()];
                    out.push((code.to_string(), f.display().to_string()));
                }
            }
        }
    }
    out
}

#[test]
fn every_diagnostic_has_its_own_code() {
    let codes = codes_in_source();
    // The scan must see the codes it is meant to police (a broken scan would pass vacuously).
    assert!(codes.len() > 80, "only {} codes found", codes.len());
    for known in [
        "unknown-control",
        "unknown-steady-name",
        "duplicate-name",
        "unknown-name",
        "syntax",
        "expression-too-deep",
    ] {
        assert!(codes.iter().any(|(c, _)| c == known), "{known} not found");
    }
    let mut seen = std::collections::BTreeMap::<&str, Vec<&str>>::new();
    for (c, f) in &codes {
        seen.entry(c).or_default().push(f);
    }
    let repeated: Vec<_> = seen.iter().filter(|(_, f)| f.len() > 1).collect();
    assert!(
        repeated.is_empty(),
        "codes used for more than one diagnostic: {repeated:?}"
    );
}
