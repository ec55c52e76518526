//! `saddle estimate` through the binary: the JSON shape of cli.md with provenance, reproducible
//! draws, the draws file, and the exit statuses of bad input. Short chains keep it fast.

use crate::support::{code, saddle, temp_model, text};

const MODEL: &str = "models/island_estimate.saddle";
const DATA: &str = "models/island_estimate.csv";

fn run_json(extra: &[&str]) -> (i32, serde_json::Value, String) {
    let mut args = vec![
        "estimate",
        MODEL,
        "--data",
        DATA,
        "--chains",
        "2",
        "--draws",
        "150",
        "--burn-in",
        "100",
        "--starts",
        "1",
        "--format",
        "json",
    ];
    args.extend_from_slice(extra);
    let o = saddle(&args);
    let out = text(&o.stdout);
    let v = serde_json::from_str(&out).unwrap_or(serde_json::Value::Null);
    (code(&o), v, text(&o.stderr))
}

#[test]
fn json_has_the_contract_fields_and_provenance() {
    let (c, v, err) = run_json(&["--seed", "3"]);
    assert_eq!(c, 0, "{err}");
    for k in [
        "mode",
        "mode_sd",
        "loglik_at_mode",
        "log_marginal",
        "posterior",
        "acceptance",
        "provenance",
    ] {
        assert!(v.get(k).is_some(), "missing {k}");
    }
    let mode = v["mode"].as_object().unwrap();
    assert_eq!(mode.len(), 8);
    assert!(mode.contains_key("theta") && mode.contains_key("sd(e_rate)"));
    let post = &v["posterior"]["phi_pi"];
    for k in ["mean", "sd", "q05", "q50", "q95", "rhat", "ess"] {
        assert!(post[k].is_number(), "posterior.phi_pi.{k}");
    }
    assert!(post["q05"].as_f64() <= post["q95"].as_f64());
    assert_eq!(v["acceptance"].as_array().unwrap().len(), 2);
    assert!(v["log_marginal"]["laplace"].is_number());
    let p = &v["provenance"];
    assert_eq!(p["sha256"].as_str().unwrap().len(), 64);
    assert_eq!(p["data_sha256"].as_str().unwrap().len(), 64);
    assert_eq!(p["regime"], "rule");
    assert!(p["parameters"]["theta"].is_number());
    assert!(p["threshold"].is_number());
}

#[test]
fn same_seed_same_draws_and_the_draws_file_is_complete() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("draws.csv");
    let ps = path.to_str().unwrap();
    let (c1, v1, e1) = run_json(&["--seed", "8", "--draws-out", ps]);
    assert_eq!(c1, 0, "{e1}");
    let (_, v2, _) = run_json(&["--seed", "8"]);
    assert_eq!(v1["posterior"], v2["posterior"]);
    let (_, v3, _) = run_json(&["--seed", "9"]);
    assert_ne!(v1["posterior"], v3["posterior"]);
    let csv = std::fs::read_to_string(&path).unwrap();
    let mut lines = csv.lines();
    let header = lines.next().unwrap();
    assert!(header.starts_with("seed,chain,draw,theta,"));
    assert!(header.ends_with(",logpost"));
    let cols = header.split(',').count();
    let rows: Vec<&str> = lines.collect();
    assert_eq!(rows.len(), 2 * 150);
    for r in &rows {
        let cells: Vec<&str> = r.split(',').collect();
        assert_eq!(cells.len(), cols, "{r}");
        assert!(cells.iter().all(|c| c.parse::<f64>().is_ok()), "{r}");
    }
}

#[test]
fn text_says_what_results_are_conditional_on_and_plot_draws_traces() {
    let dir = tempfile::tempdir().unwrap();
    let svg = dir.path().join("traces.svg");
    let o = saddle(&[
        "estimate",
        MODEL,
        "--data",
        DATA,
        "--chains",
        "2",
        "--draws",
        "100",
        "--burn-in",
        "50",
        "--starts",
        "1",
        "--plot",
        svg.to_str().unwrap(),
    ]);
    assert_eq!(code(&o), 0, "{}", text(&o.stderr));
    let t = text(&o.stdout);
    assert!(t.contains("conditional on the model, the priors and the data"));
    assert!(t.contains("island_estimate.saddle") && t.contains("sha256"));
    assert!(t.contains("Posterior mode") && t.contains("R-hat"));
    let doc = std::fs::read_to_string(&svg).unwrap();
    assert!(doc.starts_with("<svg") || doc.starts_with("<?xml"));
    assert!(doc.contains("chain 2") && doc.contains("sd(e_cost)"));
    assert!(doc.contains("island_estimate.saddle"));
    // The prior/posterior densities follow the traces in the same document: one nested
    // document each, and one panel title per quantity in the densities.
    assert_eq!(
        doc.matches("<svg").count(),
        3,
        "traces and densities nested in one"
    );
    let dens = &doc[doc
        .find("Prior and posterior densities")
        .expect("densities")..];
    for q in ["theta", "phi_pi", "sd(e_dem)", "sd(e_rate)"] {
        assert!(dens.contains(&format!(">{q}<")), "{q}");
    }
    assert!(dens.contains("stroke-dasharray"), "the mode is marked");
}

#[test]
fn bad_input_gets_the_documented_exit_status() {
    // No priors: the model cannot be estimated (exit 1).
    let m = temp_model(
        "endogenous\n  x\nexogenous\n  e\nparameters\n  rho = 0.5\nequations\n  x = rho * x[t-1] + e\nobservables\n  y = x\n",
    );
    let o = saddle(&["estimate", m.path().to_str().unwrap(), "--data", DATA]);
    assert_eq!(code(&o), 1, "{}", text(&o.stderr));
    assert!(text(&o.stderr).contains("priors"));
    // A data file without the observables' columns (exit 2).
    let d = tempfile::Builder::new().suffix(".csv").tempfile().unwrap();
    std::fs::write(d.path(), "period,other\n1,0.5\n2,0.1\n").unwrap();
    let o = saddle(&["estimate", MODEL, "--data", d.path().to_str().unwrap()]);
    assert_eq!(code(&o), 2, "{}", text(&o.stderr));
    // A missing data file, csv format, zero chains (exit 2).
    assert_eq!(
        code(&saddle(&["estimate", MODEL, "--data", "no/such.csv"])),
        2
    );
    assert_eq!(
        code(&saddle(&[
            "estimate", MODEL, "--data", DATA, "--format", "csv"
        ])),
        2
    );
    assert_eq!(
        code(&saddle(&[
            "estimate", MODEL, "--data", DATA, "--chains", "0"
        ])),
        2
    );
    // Chains that never move (a step far too large): the report says so, exit 4.
    let o = saddle(&[
        "estimate",
        MODEL,
        "--data",
        DATA,
        "--starts",
        "1",
        "--chains",
        "2",
        "--draws",
        "50",
        "--burn-in",
        "20",
        "--step",
        "1000",
    ]);
    assert_eq!(code(&o), 4, "{}", text(&o.stderr));
    assert!(text(&o.stdout).contains("never moved"));
    // No unique stable solution at the calibration (exit 3, diagnosis as solve prints it).
    let o = saddle(&[
        "estimate",
        MODEL,
        "--data",
        DATA,
        "--set",
        "phi_pi=0.5",
        "--format",
        "json",
    ]);
    assert_eq!(code(&o), 3, "{}", text(&o.stderr));
    let v: serde_json::Value = serde_json::from_str(&text(&o.stdout)).unwrap();
    assert_eq!(v["status"], "indeterminate");
}

#[test]
fn diagnosing_the_draws_files_repeats_the_runs_diagnostics_and_merges_runs() {
    let dir = tempfile::tempdir().unwrap();
    let a = dir.path().join("a.csv");
    let b = dir.path().join("b.csv");
    let (c, run_a, e) = run_json(&["--seed", "5", "--draws-out", a.to_str().unwrap()]);
    assert_eq!(c, 0, "{e}");
    let (c, _, e) = run_json(&["--seed", "6", "--draws-out", b.to_str().unwrap()]);
    assert_eq!(c, 0, "{e}");
    // The file holds the run's draws exactly (shortest round-trip numbers), split into the same
    // chains: the summaries and diagnostics are the run's own.
    let (c, diag_a, e) = run_json(&["--diagnose", a.to_str().unwrap()]);
    assert_eq!(c, 0, "{e}");
    assert_eq!(diag_a["posterior"], run_a["posterior"]);
    assert_eq!(diag_a["sampler"]["chains"], 2);
    assert_eq!(
        diag_a["sampler"]["files"][0]["sha256"]
            .as_str()
            .unwrap()
            .len(),
        64
    );
    // Two runs (seeds 5 and 6): four chains, whether given as two files or concatenated.
    let (c, two, e) = run_json(&["--diagnose", a.to_str().unwrap(), b.to_str().unwrap()]);
    assert_eq!(c, 0, "{e}");
    assert_eq!(two["sampler"]["chains"], 4);
    assert_eq!(two["acceptance"].as_array().unwrap().len(), 4);
    let cat = dir.path().join("cat.csv");
    let mut both = std::fs::read(&a).unwrap();
    both.extend(std::fs::read(&b).unwrap());
    std::fs::write(&cat, both).unwrap();
    let (c, merged, e) = run_json(&["--diagnose", cat.to_str().unwrap()]);
    assert_eq!(c, 0, "{e}");
    assert_eq!(merged["posterior"], two["posterior"]);
    assert_ne!(two["posterior"], run_a["posterior"]);
    // A bad file: exit 1 with its line and column, nothing on stdout.
    let bad = dir.path().join("bad.csv");
    std::fs::write(&bad, "seed,chain,draw,theta,logpost\n1,1,x,0.5,-3\n").unwrap();
    let o = saddle(&[
        "estimate",
        MODEL,
        "--data",
        DATA,
        "--starts",
        "1",
        "--diagnose",
        bad.to_str().unwrap(),
    ]);
    assert_eq!(code(&o), 1);
    assert!(
        text(&o.stderr).contains("bad.csv:2:3 (draw)"),
        "{}",
        text(&o.stderr)
    );
    assert!(o.stdout.is_empty());
}
