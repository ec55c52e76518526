//! The output contract of cli.md: one shape per format without a unique stable solution, and
//! files written safely (`-o`): through symbolic links, keeping permissions, with any legal
//! name, and a failed write never exits 0.

use crate::support::{code, saddle, temp_model, text};

/// The forward price p = b p[t+1] + e with b = 1.5 has no unique stable solution (its only
/// root 1/b lies inside the unit circle: indeterminate; common practice, the scalar
/// Blanchard-Kahn case).
const INDETERMINATE: &str =
    "endogenous\n  p\nexogenous\n  e\nparameters\n  b = 1.5\nequations\n  p = b * p[t+1] + e\n";

#[test]
fn without_a_solution_every_command_keeps_one_shape_per_format() {
    let m = temp_model(INDETERMINATE);
    let path = m.path().to_str().unwrap();
    let dir = tempfile::tempdir().unwrap();
    for command in ["irf", "moments", "simulate"] {
        // CSV: nothing on stdout, the diagnosis on stderr, no file.
        let file = dir.path().join(format!("{command}.csv"));
        let o = saddle(&[
            command,
            path,
            "--format",
            "csv",
            "-o",
            file.to_str().unwrap(),
        ]);
        assert_eq!(code(&o), 3, "{command}");
        assert!(o.stdout.is_empty(), "{command}: {}", text(&o.stdout));
        assert!(text(&o.stderr).contains("Indeterminate"), "{command}");
        assert!(!file.exists(), "{command} left {}", file.display());
        // JSON: the solve shape and nothing else.
        let o = saddle(&[command, path, "--format", "json"]);
        assert_eq!(code(&o), 3, "{command}");
        let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
        assert_eq!(v["status"], "indeterminate", "{command}");
        assert!(
            v["policy"].is_null() && v["diagnosis"].is_string(),
            "{command}"
        );
        // Text: the diagnosis.
        let o = saddle(&[command, path]);
        assert_eq!(code(&o), 3, "{command}");
        assert!(text(&o.stdout).contains("Indeterminate"), "{command}");
    }
}

#[cfg(unix)]
#[test]
fn output_files_are_written_through_links_keeping_their_mode() {
    use std::os::unix::fs::PermissionsExt;
    let dir = tempfile::tempdir().unwrap();
    let real = dir.path().join("real.csv");
    let link = dir.path().join("link.csv");
    std::os::unix::fs::symlink(&real, &link).unwrap();
    let args = |out: &str| saddle(&["irf", "models/harbour.saddle", "--format", "csv", "-o", out]);
    // A dangling link: the file it names is created, the link stays a link.
    assert_eq!(code(&args(link.to_str().unwrap())), 0);
    assert!(std::fs::symlink_metadata(&link)
        .unwrap()
        .file_type()
        .is_symlink());
    assert!(std::fs::read_to_string(&real)
        .unwrap()
        .starts_with("shock,variable,period,value"));
    // The mode of an existing file is kept.
    std::fs::set_permissions(&real, std::fs::Permissions::from_mode(0o600)).unwrap();
    assert_eq!(code(&args(link.to_str().unwrap())), 0);
    let mode = std::fs::metadata(&real).unwrap().permissions().mode() & 0o777;
    assert_eq!(mode, 0o600);
    // A 250-character name (legal on common file systems) works: the temporary name is short.
    let long = dir.path().join(format!("{}.csv", "b".repeat(246)));
    assert_eq!(code(&args(long.to_str().unwrap())), 0);
    assert!(long.exists());
    // No temporary file is left behind.
    let leftovers: Vec<_> = std::fs::read_dir(dir.path())
        .unwrap()
        .filter_map(|e| e.ok())
        .filter(|e| e.file_name().to_string_lossy().contains("saddle-"))
        .collect();
    assert!(leftovers.is_empty(), "{leftovers:?}");
}

#[cfg(target_os = "linux")]
#[test]
fn a_failed_write_to_stdout_does_not_exit_0() {
    let full = std::fs::OpenOptions::new().write(true).open("/dev/full");
    let Ok(full) = full else { return };
    let o = std::process::Command::new(env!("CARGO_BIN_EXE_saddle"))
        .args(["irf", "models/harbour.saddle"])
        .current_dir(env!("CARGO_MANIFEST_DIR"))
        .stdout(full)
        .output()
        .unwrap();
    assert_ne!(o.status.code(), Some(0));
    assert!(text(&o.stderr).contains("cannot write to standard output"));
    // A device as the -o target is written directly (it cannot be renamed over).
    let o = saddle(&["irf", "models/harbour.saddle", "-o", "/dev/null"]);
    assert_eq!(code(&o), 0);
}

/// The same input gets the same exit status from every command: a model without innovations is
/// a valid model (its responses are empty, its moments zero), so irf exits 0 like moments (it
/// used to exit 2, a command-line error).
#[test]
fn a_model_without_innovations_is_not_an_error_for_any_command() {
    let m = temp_model("endogenous\n  x\nequations\n  x = 0.5 * x[t-1]\n");
    let path = m.path().to_str().unwrap();
    for command in ["check", "solve", "irf", "moments", "simulate"] {
        let o = saddle(&[command, path]);
        assert_eq!(code(&o), 0, "{command}: {}", text(&o.stderr));
    }
    let o = saddle(&["irf", path, "--format", "json"]);
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    assert!(v["responses"].as_object().unwrap().is_empty());
}

/// Every output says where it came from (cli.md): JSON carries `provenance` with exactly the
/// `--set` values as overrides and every parameter as used; text ends with the provenance line; a
/// CSV written with `-o` gets `PATH.json` beside it and stays a plain table.
#[test]
fn every_output_records_its_provenance() {
    let set = ["--set", "phi_pi=1.7"];
    for command in ["solve", "irf", "moments", "simulate"] {
        let mut a = vec![command, "models/harbour.saddle", "--format", "json"];
        a.extend(set);
        let o = saddle(&a);
        assert_eq!(code(&o), 0, "{command}: {}", text(&o.stderr));
        let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
        let p = &v["provenance"];
        assert_eq!(p["file"], "models/harbour.saddle", "{command}");
        assert_eq!(p["sha256"].as_str().map(str::len), Some(64), "{command}");
        assert_eq!(
            p["overrides"],
            serde_json::json!({"phi_pi": 1.7}),
            "{command}"
        );
        assert_eq!(p["parameters"]["phi_pi"], 1.7, "{command}");
        assert_eq!(p["parameters"]["beta"], 0.99, "{command}");
        assert_eq!(p["regime"], "rule", "{command}");
        let mut a = vec![command, "models/harbour.saddle"];
        a.extend(set);
        let o = saddle(&a);
        let t = text(&o.stdout);
        assert!(
            t.trim_end()
                .lines()
                .last()
                .unwrap_or("")
                .starts_with("Source: models/harbour.saddle (sha256 ")
                && t.contains("overrides phi_pi=1.7"),
            "{command}: {t}"
        );
    }
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("irf.csv");
    let o = saddle(&[
        "irf",
        "models/harbour.saddle",
        "--format",
        "csv",
        "-o",
        out.to_str().unwrap(),
    ]);
    assert_eq!(code(&o), 0);
    assert!(std::fs::read_to_string(&out)
        .unwrap()
        .starts_with("shock,variable,period,value\n"));
    let side: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(dir.path().join("irf.csv.json")).unwrap())
            .unwrap();
    assert_eq!(side["provenance"]["file"], "models/harbour.saddle");
}

/// `-` reads the model from standard input; a named pipe as the model file is refused at once
/// instead of waiting forever for a writer.
#[cfg(unix)]
#[test]
fn models_come_from_regular_files_or_standard_input() {
    use std::io::Write;
    use std::process::{Command, Stdio};
    let src = std::fs::read(crate::support::model_path("harbour.saddle")).unwrap();
    let mut child = Command::new(env!("CARGO_BIN_EXE_saddle"))
        .args(["solve", "-", "--format", "json"])
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .spawn()
        .unwrap();
    child.stdin.take().unwrap().write_all(&src).unwrap();
    let o = child.wait_with_output().unwrap();
    assert_eq!(o.status.code(), Some(0));
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    assert_eq!(v["status"], "determinate");

    let dir = tempfile::tempdir().unwrap();
    let fifo = dir.path().join("model.fifo");
    let made = Command::new("mkfifo").arg(&fifo).status();
    if made.map(|s| s.success()).unwrap_or(false) {
        let started = std::time::Instant::now();
        let o = saddle(&["check", fifo.to_str().unwrap()]);
        assert!(started.elapsed() < std::time::Duration::from_secs(5));
        assert_eq!(code(&o), 2);
        assert!(text(&o.stderr).contains("not a regular file"));
    }
}

/// `solve --format csv` is one tidy table with the roots and, with a solution, every
/// coefficient of the decision rule and the law of motion, equal to the JSON's.
#[test]
fn solve_csv_is_a_tidy_table_of_roots_and_rules() {
    let o = saddle(&["solve", "models/harbour.saddle", "--format", "csv"]);
    assert_eq!(code(&o), 0);
    let t = text(&o.stdout);
    let mut lines = t.lines();
    assert_eq!(lines.next(), Some("part,row,term,value"));
    let rows: Vec<Vec<&str>> = lines.map(|l| l.split(',').collect()).collect();
    assert!(rows.iter().all(|r| r.len() == 4));
    let j = saddle(&["solve", "models/harbour.saddle", "--format", "json"]);
    let v: serde_json::Value = serde_json::from_slice(&j.stdout).unwrap();
    let n_roots = v["roots"].as_array().unwrap().len();
    assert_eq!(rows.iter().filter(|r| r[0] == "root").count(), 4 * n_roots);
    // P row of `infl` on `drift[t-1]` and Q on `e_cost`, as in the JSON.
    let value = |part: &str, row: &str, term: &str| -> f64 {
        rows.iter()
            .find(|r| r[0] == part && r[1] == row && r[2] == term)
            .unwrap_or_else(|| panic!("no {part},{row},{term}"))[3]
            .parse()
            .unwrap()
    };
    let infl = 1; // declaration order: gap, infl, rate, drift
    assert_eq!(
        value("policy", "infl", "drift[t-1]"),
        v["policy"]["states"][infl][0].as_f64().unwrap()
    );
    assert_eq!(
        value("policy", "infl", "e_cost"),
        v["policy"]["shocks"][infl][1].as_f64().unwrap()
    );
    assert_eq!(
        value("transition", "drift", "drift[t-1]"),
        v["transition"]["states"][0][0].as_f64().unwrap()
    );
}

/// `--vars` selects variables, in the order given, for irf, moments and simulate; an unknown
/// name is a command-line error (exit 2) naming the variables.
#[test]
fn vars_select_variables_in_the_order_given() {
    let o = saddle(&[
        "irf",
        "models/harbour.saddle",
        "--vars",
        "infl,gap",
        "--format",
        "json",
    ]);
    assert_eq!(code(&o), 0);
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    let keys: Vec<&String> = v["responses"]["e_rate"]
        .as_object()
        .unwrap()
        .keys()
        .collect();
    assert_eq!(keys, ["infl", "gap"]);
    let all = saddle(&["irf", "models/harbour.saddle", "--format", "json"]);
    let w: serde_json::Value = serde_json::from_slice(&all.stdout).unwrap();
    assert_eq!(
        v["responses"]["e_rate"]["infl"],
        w["responses"]["e_rate"]["infl"]
    );
    let o = saddle(&[
        "moments",
        "models/harbour.saddle",
        "--vars",
        "rate",
        "--format",
        "json",
    ]);
    let m: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    assert_eq!(m["variables"], serde_json::json!(["rate"]));
    let o = saddle(&[
        "simulate",
        "models/harbour.saddle",
        "--vars",
        "drift",
        "--periods",
        "2",
        "--format",
        "csv",
    ]);
    assert!(text(&o.stdout).starts_with("period,drift\n"));
    let o = saddle(&["irf", "models/harbour.saddle", "--vars", "nope"]);
    assert_eq!(code(&o), 2);
    assert!(text(&o.stderr).contains("gap, infl, rate, drift"));
}

/// The solver's warnings reach every command's output (moments and simulate dropped them).
#[test]
fn solver_warnings_reach_moments_and_simulate() {
    let m = temp_model("endogenous\n  x\nexogenous\n  e\nequations\n  x = 0.5 * x[t-1] + e\n");
    let path = m.path().to_str().unwrap();
    for command in ["moments", "simulate"] {
        let o = saddle(&[command, path, "--format", "json"]);
        assert_eq!(code(&o), 0, "{command}");
        let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
        let w = v["warnings"].as_array().unwrap();
        assert!(
            w.iter()
                .any(|x| x.as_str().unwrap_or("").contains("no sd or var given")),
            "{command}: {w:?}"
        );
    }
}
