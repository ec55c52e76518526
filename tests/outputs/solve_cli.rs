//! The `solve` and `irf` commands end to end: exit statuses, formats and messages (cli.md).

use crate::support::{code, saddle, temp_model, text};

#[test]
fn solve_prints_roots_counts_and_equations() {
    let o = saddle(&["solve", "models/harbour.saddle"]);
    assert_eq!(code(&o), 0, "{}", text(&o.stderr));
    let out = text(&o.stdout);
    assert!(out.contains("Status: determinate"), "{out}");
    assert!(out.contains("unstable") && out.contains("modulus"), "{out}");
    assert!(
        out.contains("gap   = -0.3582 drift[t-1] - 0.5970 e_rate - 0.7053 e_cost"),
        "{out}"
    );
}

#[test]
fn solve_json_has_the_contract_fields() {
    let o = saddle(&["solve", "models/harbour.saddle", "--format", "json"]);
    assert_eq!(code(&o), 0);
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    for key in [
        "title",
        "status",
        "threshold",
        "counts",
        "roots",
        "variables",
        "shocks",
        "steady_state",
        "states",
        "policy",
        "transition",
        "warnings",
    ] {
        assert!(v.get(key).is_some(), "missing {key}");
    }
    assert_eq!(v["status"], "determinate");
    assert_eq!(v["counts"]["forward_looking"], 2);
    assert_eq!(v["states"][0], "drift[t-1]");
    assert_eq!(v["policy"]["states"].as_array().unwrap().len(), 4);
    assert_eq!(v["transition"]["shocks"][0].as_array().unwrap().len(), 2);
    let r0 = &v["roots"][0];
    for key in ["re", "im", "modulus", "infinite", "stable"] {
        assert!(r0.get(key).is_some(), "root misses {key}");
    }
}

#[test]
fn indeterminacy_exits_3_with_the_diagnosis_in_json() {
    let o = saddle(&[
        "solve",
        "models/harbour.saddle",
        "--set",
        "phi_pi=0.9",
        "--format",
        "json",
    ]);
    assert_eq!(code(&o), 3);
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    assert_eq!(v["status"], "indeterminate");
    assert!(v["policy"].is_null() && v["transition"].is_null());
    assert!(v["diagnosis"].as_str().unwrap().contains("too few"));
    let o = saddle(&["irf", "models/harbour.saddle", "--set", "phi_pi=0.9"]);
    assert_eq!(code(&o), 3);
    assert!(text(&o.stdout).contains("Diagnosis: Indeterminate"));
}

#[test]
fn bad_command_lines_exit_2_with_clear_messages() {
    let o = saddle(&["solve", "models/harbour.saddle", "--set", "phi_p=2"]);
    assert_eq!(code(&o), 2);
    assert!(
        text(&o.stderr).contains("did you mean `phi_pi`"),
        "{}",
        text(&o.stderr)
    );
    // theta = 0 makes the derived kappa infinite.
    let o = saddle(&["solve", "models/harbour.saddle", "--set", "theta=0"]);
    assert_eq!(code(&o), 2);
    assert!(text(&o.stderr).contains("kappa"), "{}", text(&o.stderr));
    let o = saddle(&["solve", "models/harbour.saddle", "--set", "phi_pi=nan"]);
    assert_eq!(code(&o), 2);
    let o = saddle(&["irf", "models/harbour.saddle", "--shock", "e_cots"]);
    assert_eq!(code(&o), 2);
    assert!(
        text(&o.stderr).contains("did you mean `e_cost`"),
        "{}",
        text(&o.stderr)
    );
    // --plot writes the SVG chart beside the normal output (wired by the visual branch).
    let dir = tempfile::tempdir().unwrap();
    let plot = dir.path().join("x.svg");
    let o = saddle(&[
        "irf",
        "models/harbour.saddle",
        "--plot",
        plot.to_str().unwrap(),
    ]);
    assert_eq!(code(&o), 0, "{}", text(&o.stderr));
    assert!(std::fs::read_to_string(&plot).unwrap().starts_with("<svg"));
}

#[test]
fn numerical_failures_exit_4_with_what_was_tried() {
    // No real steady state: x^2 + 1 = 0.
    let f = temp_model(
        "endogenous\n x\nexogenous\n e\nequations\n nowhere: x^2 + 1 = e\nsteady\n guess x = 1\n",
    );
    let o = saddle(&["solve", f.path().to_str().unwrap()]);
    assert_eq!(code(&o), 4, "{}", text(&o.stderr));
    let err = text(&o.stderr);
    assert!(err.contains("nowhere") && err.contains("guess"), "{err}");
    // A singular pencil: two copies of one equation.
    let f = temp_model("endogenous\n x, y\nexogenous\n e\nequations\n x[t+1] = y + e\n 2 * x[t+1] = 2 * y + 2 * e\n");
    let o = saddle(&["solve", f.path().to_str().unwrap()]);
    assert_eq!(code(&o), 4, "{}", text(&o.stderr));
    assert!(text(&o.stderr).contains("singular"), "{}", text(&o.stderr));
    // ln of a negative guess is named.
    let f =
        temp_model("endogenous\n x\nexogenous\n e\nequations\n ln(x) = e\nsteady\n guess x = -1\n");
    let o = saddle(&["solve", f.path().to_str().unwrap()]);
    assert_eq!(code(&o), 4);
    assert!(text(&o.stderr).contains("ln of -1"), "{}", text(&o.stderr));
}

#[test]
fn irf_formats_and_options() {
    let o = saddle(&[
        "irf",
        "models/harbour.saddle",
        "--format",
        "csv",
        "--horizon",
        "3",
        "--shock",
        "e_rate",
        "--size",
        "unit",
    ]);
    assert_eq!(code(&o), 0);
    let out = text(&o.stdout);
    let lines: Vec<&str> = out.lines().collect();
    assert_eq!(lines[0], "shock,variable,period,value");
    assert_eq!(lines.len(), 1 + 4 * 4);
    let drift1: f64 = lines
        .iter()
        .find_map(|l| l.strip_prefix("e_rate,drift,1,"))
        .unwrap()
        .parse()
        .unwrap();
    assert!((drift1 - 0.6).abs() < 1e-14, "{out}");
    let o = saddle(&[
        "irf",
        "models/harbour.saddle",
        "--format",
        "json",
        "--horizon",
        "5",
    ]);
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    assert_eq!(v["horizon"], 5);
    assert_eq!(v["size"], "one-sd");
    assert_eq!(
        v["responses"]["e_cost"]["infl"].as_array().unwrap().len(),
        6
    );
    assert!((v["responses"]["e_rate"]["drift"][0].as_f64().unwrap() - 0.25).abs() < 1e-15);
}

#[test]
fn timings_go_to_stderr_and_output_files_are_written() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("out.json");
    let o = saddle(&[
        "solve",
        "models/island_growth.saddle",
        "--timings",
        "--format",
        "json",
        "-o",
        path.to_str().unwrap(),
    ]);
    assert_eq!(code(&o), 0);
    assert!(o.stdout.is_empty());
    let err = text(&o.stderr);
    for phase in [
        "derivatives",
        "steady state",
        "linearization",
        "canonical form",
        "qz",
        "solution",
    ] {
        assert!(err.contains(phase), "{err}");
    }
    let v: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&path).unwrap()).unwrap();
    assert_eq!(v["log_variables"].as_array().unwrap().len(), 4);
}

#[test]
fn a_root_on_the_threshold_names_the_flag_that_counts_it_the_other_way() {
    // rho = 1 puts a root exactly on the default threshold; the library's warning says how it
    // was counted and the binary adds the flag (the library names no flag).
    let f = temp_model(
        "endogenous\n  p, m\nexogenous\n  e\nparameters\n  a = 0.9\n  rho = 1\nequations\n  \
         price: p = a * p[t+1] + m\n  cost:  m = rho * m[t-1] + e\n",
    );
    let path = f.path().to_str().unwrap();
    let o = saddle(&["solve", path, "--format", "json"]);
    assert_eq!(code(&o), 0, "{}", text(&o.stderr));
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    let warnings = v["warnings"].to_string();
    assert!(
        warnings.contains("count as stable by default"),
        "{warnings}"
    );
    assert!(warnings.contains("use --boundary-unstable"), "{warnings}");
    let o = saddle(&["solve", path, "--format", "json", "--boundary-unstable"]);
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    let warnings = v["warnings"].to_string();
    assert!(warnings.contains("drop --boundary-unstable"), "{warnings}");
}
