//! `saddle filter`, `decompose` and `forecast` through the binary on the bundled demo
//! (models/island_data.saddle, data/island_data.csv): JSON shapes and provenance, the
//! decomposition adding up, `--fix` met exactly, bad data files (exit 1, nothing written) and
//! an indeterminate model (exit 3).

use std::path::PathBuf;

use crate::support::{code, model_path, saddle, text};

fn model() -> String {
    model_path("island_data.saddle")
        .to_string_lossy()
        .into_owned()
}

fn data() -> String {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("data/island_data.csv")
        .to_string_lossy()
        .into_owned()
}

fn json(args: &[&str]) -> serde_json::Value {
    let out = saddle(args);
    assert_eq!(code(&out), 0, "{}", text(&out.stderr));
    serde_json::from_slice(&out.stdout).unwrap()
}

fn series(v: &serde_json::Value) -> Vec<f64> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_f64().unwrap_or(f64::NAN))
        .collect()
}

#[test]
fn filter_json_has_the_contract_fields_and_provenance() {
    let (m, d) = (model(), data());
    let v = json(&["filter", &m, "--data", &d, "--format", "json"]);
    assert!(v["loglik"].as_f64().unwrap().is_finite());
    let periods = v["periods"].as_array().unwrap();
    assert_eq!(periods.len(), 80);
    assert_eq!(periods[0], "2031Q1");
    for key in ["filtered", "smoothed", "smoothed_sd"] {
        for var in ["gap", "infl", "rate", "drift", "pref"] {
            assert_eq!(series(&v[key][var]).len(), 80, "{key} {var}");
        }
    }
    assert_eq!(series(&v["smoothed_shocks"]["e_demand"]).len(), 80);
    // Missing values give null prediction errors (row 4 of growth is empty in the file).
    assert!(v["prediction_errors"]["growth"][3].is_null());
    assert!(v["prediction_errors"]["growth"][4].is_f64());
    let p = &v["provenance"];
    assert_eq!(p["sha256"].as_str().unwrap().len(), 64);
    assert_eq!(p["data_sha256"].as_str().unwrap().len(), 64);
    assert!(p["data_file"]
        .as_str()
        .unwrap()
        .ends_with("island_data.csv"));
    assert_eq!(p["regime"], "rule");
    assert!(p["parameters"]["phi_pi"].is_f64());
    // Standard deviations are non-negative; the smoothed sd never exceeds the filtered
    // uncertainty's bound of the unconditional sd (a sanity bound only: sd >= 0).
    assert!(series(&v["smoothed_sd"]["gap"]).iter().all(|s| *s >= 0.0));
}

#[test]
fn overrides_change_the_likelihood_and_are_recorded() {
    let (m, d) = (model(), data());
    let a = json(&["filter", &m, "--data", &d, "--format", "json"]);
    let b = json(&[
        "filter",
        &m,
        "--data",
        &d,
        "--format",
        "json",
        "--set",
        "rho_d=0.5",
    ]);
    assert!(a["loglik"].as_f64().unwrap() > b["loglik"].as_f64().unwrap());
    assert_eq!(b["provenance"]["overrides"]["rho_d"], 0.5);
}

#[test]
fn decomposition_adds_up_to_the_smoothed_path() {
    let (m, d) = (model(), data());
    let v = json(&["decompose", &m, "--data", &d, "--format", "json"]);
    let f = json(&["filter", &m, "--data", &d, "--format", "json"]);
    for var in ["gap", "infl", "rate", "drift", "pref"] {
        let c = &v["contributions"][var];
        let parts: Vec<Vec<f64>> = ["e_rate", "e_cost", "e_demand", "initial"]
            .iter()
            .map(|k| series(&c[*k]))
            .collect();
        let smoothed = series(&f["smoothed"][var]);
        let scale = smoothed.iter().fold(0.0f64, |a, x| a.max(x.abs()));
        for t in 0..80 {
            let sum: f64 = parts.iter().map(|p| p[t]).sum();
            // 1e-10 of the series' size: the forward recursion against the smoother's values
            // accumulates a few rounding errors per period (issue 10's bar).
            assert!(
                (sum - smoothed[t]).abs() <= 1e-10 * scale,
                "{var} period {t}: {sum} vs {}",
                smoothed[t]
            );
        }
    }
}

#[test]
fn fixed_future_values_are_met_exactly() {
    let (m, d) = (model(), data());
    let v = json(&[
        "forecast",
        &m,
        "--data",
        &d,
        "--horizon",
        "6",
        "--fix",
        "policy_rate=3.5,3.25,3",
        "--fix",
        "growth=0.2",
        "--format",
        "json",
    ]);
    assert_eq!(v["periods"][0], "2051Q1");
    let rate = series(&v["mean"]["policy_rate"]);
    let rate_sd = series(&v["sd"]["policy_rate"]);
    for (h, want) in [3.5, 3.25, 3.0].iter().enumerate() {
        assert!((rate[h] - want).abs() < 1e-10, "h {h}: {}", rate[h]);
        assert!(rate_sd[h] < 1e-6, "sd {}", rate_sd[h]);
    }
    assert!(rate_sd[3] > 0.01);
    let g = series(&v["mean"]["growth"]);
    assert!((g[0] - 0.2).abs() < 1e-10);
    // The unconditional forecast differs.
    let u = json(&[
        "forecast",
        &m,
        "--data",
        &d,
        "--horizon",
        "6",
        "--format",
        "json",
    ]);
    assert!((series(&u["mean"]["policy_rate"])[0] - 3.5).abs() > 1e-3);
    assert_eq!(series(&u["sd"]["gap"]).len(), 6);
}

#[test]
fn csv_outputs_are_tidy() {
    let (m, d) = (model(), data());
    for cmd in ["filter", "decompose", "forecast"] {
        let out = saddle(&[cmd, &m, "--data", &d, "--format", "csv"]);
        assert_eq!(code(&out), 0, "{cmd}: {}", text(&out.stderr));
        let s = text(&out.stdout);
        let mut lines = s.lines();
        assert_eq!(lines.next(), Some("period,kind,name,value"));
        assert!(lines.all(|l| l.split(',').count() == 4), "{cmd}");
    }
}

#[test]
fn text_output_says_what_it_is_conditional_on() {
    let (m, d) = (model(), data());
    for cmd in ["filter", "decompose", "forecast"] {
        let out = saddle(&[cmd, &m, "--data", &d]);
        assert_eq!(code(&out), 0, "{cmd}");
        let s = text(&out.stdout);
        assert!(s.contains("conditional on the model, its calibration and its data"));
        assert!(s.contains("island_data.csv (sha256 "));
    }
}

fn bad_data(content: &str) -> (std::process::Output, bool) {
    let dir = tempfile::tempdir().unwrap();
    let csv = dir.path().join("bad.csv");
    std::fs::write(&csv, content).unwrap();
    let target = dir.path().join("out.json");
    let out = saddle(&[
        "filter",
        &model(),
        "--data",
        csv.to_str().unwrap(),
        "--format",
        "json",
        "-o",
        target.to_str().unwrap(),
    ]);
    let written = target.exists();
    (out, written)
}

#[test]
fn bad_data_files_exit_1_and_write_nothing() {
    let cases = [
        (
            "period,growth,inflation,policy_rate\n1,0.5,2,4\n2,abc,2,4\n3,0.5,2,4\n",
            "bad.csv:3:2",
        ),
        (
            "period,growth,inflation,policy_rate\n1,0.5,2,4\n",
            "at least 2",
        ),
        (
            "period,growth,inflation\n1,0.5,2\n2,0.5,2\n",
            "policy_rate has no column",
        ),
        (
            "period,growth,inflation,policy_rate\n1,0.5,,4\n2,0.4,NA,4\n",
            "inflation has no observed value",
        ),
    ];
    for (content, needle) in cases {
        let (out, written) = bad_data(content);
        assert_eq!(code(&out), 1, "{content}: {}", text(&out.stderr));
        assert!(!written, "{content}");
        assert!(out.stdout.is_empty());
        assert!(
            text(&out.stderr).contains(needle),
            "{needle}: {}",
            text(&out.stderr)
        );
    }
}

#[test]
fn an_indeterminate_model_exits_3_with_the_solve_shape() {
    let (m, d) = (model(), data());
    let out = saddle(&[
        "filter",
        &m,
        "--data",
        &d,
        "--set",
        "phi_pi=0.5",
        "--format",
        "json",
    ]);
    assert_eq!(code(&out), 3, "{}", text(&out.stderr));
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(v["status"], "indeterminate");
    assert!(v["policy"].is_null());
    assert!(v["diagnosis"].is_string());
    assert_eq!(v["provenance"]["overrides"]["phi_pi"], 0.5);
    let dir = tempfile::tempdir().unwrap();
    let target = dir.path().join("dec.csv");
    let out = saddle(&[
        "decompose",
        &m,
        "--data",
        &d,
        "--set",
        "phi_pi=0.5",
        "--format",
        "csv",
        "-o",
        target.to_str().unwrap(),
    ]);
    assert_eq!(code(&out), 3);
    assert!(!target.exists());
}

#[test]
fn an_unknown_or_overlong_fix_is_a_usage_error() {
    let (m, d) = (model(), data());
    let out = saddle(&["forecast", &m, "--data", &d, "--fix", "nope=1"]);
    assert_eq!(code(&out), 2);
    assert!(text(&out.stderr).contains("not an observable"));
    let out = saddle(&[
        "forecast",
        &m,
        "--data",
        &d,
        "--horizon",
        "2",
        "--fix",
        "growth=1,2,3",
    ]);
    assert_eq!(code(&out), 2);
}

#[test]
fn plots_are_written_for_each_command() {
    let (m, d) = (model(), data());
    let dir = tempfile::tempdir().unwrap();
    for cmd in ["filter", "decompose", "forecast"] {
        let svg = dir.path().join(format!("{cmd}.svg"));
        let out = saddle(&[cmd, &m, "--data", &d, "--plot", svg.to_str().unwrap()]);
        assert_eq!(code(&out), 0, "{cmd}: {}", text(&out.stderr));
        let s = std::fs::read_to_string(&svg).unwrap();
        assert!(s.starts_with("<svg") && s.trim_end().ends_with("</svg>"));
        assert!(s.contains("island_data.csv"));
    }
}

#[test]
fn report_with_data_has_a_data_section_and_bad_data_writes_no_page() {
    let (m, d) = (model(), data());
    let dir = tempfile::tempdir().unwrap();
    let page = dir.path().join("r.html");
    let out = saddle(&["report", &m, "--data", &d, "-o", page.to_str().unwrap()]);
    assert_eq!(code(&out), 0, "{}", text(&out.stderr));
    let html = std::fs::read_to_string(&page).unwrap();
    for id in ["data", "data-fit", "data-decomposition", "data-forecast"] {
        assert!(html.contains(&format!("id=\"{id}\"")), "{id}");
    }
    assert!(html.contains("href=\"#data\""));
    assert!(html.contains("island_data.csv (sha256 "));
    let bad = dir.path().join("bad.csv");
    std::fs::write(&bad, "period,growth\n1,2\n2,3\n").unwrap();
    let page2 = dir.path().join("r2.html");
    let out = saddle(&[
        "report",
        &m,
        "--data",
        bad.to_str().unwrap(),
        "-o",
        page2.to_str().unwrap(),
    ]);
    assert_eq!(code(&out), 1);
    assert!(!page2.exists());
}

/// A random walk observed with noise (the local-level model): the filter takes the exact
/// diffuse start, leaves the one observation that pins the level down out of the likelihood and
/// says so; forecasts of the level have a variance growing by sd(e)^2 per period.
#[test]
fn a_unit_root_gets_the_diffuse_start_and_says_so() {
    let m = crate::support::temp_model(
        "endogenous\n level\nexogenous\n e\nequations\n level = level[t-1] + e\nobservables\n obs = 10 + level\ncovariance\n sd(e) = 0.5\n sd(obs) = 1\n",
    );
    let dir = tempfile::tempdir().unwrap();
    let csv = dir.path().join("rw.csv");
    std::fs::write(
        &csv,
        "period,obs\n1,10.2\n2,9.7\n3,10.9\n4,11.4\n5,\n6,12.0\n",
    )
    .unwrap();
    let (mp, dp) = (m.path().to_str().unwrap(), csv.to_str().unwrap());
    let v = json(&["filter", mp, "--data", dp, "--format", "json"]);
    assert_eq!(v["likelihood"]["diffuse_observations_left_out"], 1);
    assert_eq!(v["likelihood"]["observations_used"], 4);
    let out = saddle(&["filter", mp, "--data", dp]);
    assert!(text(&out.stdout).contains("1 left out"));
    let f = json(&[
        "forecast",
        mp,
        "--data",
        dp,
        "--horizon",
        "3",
        "--format",
        "json",
    ]);
    let sd = series(&f["sd"]["level"]);
    // Var(level_{N+h}) = Var(level_N | data) + h * 0.25 (random walk, closed form).
    let d1 = sd[1] * sd[1] - sd[0] * sd[0];
    let d2 = sd[2] * sd[2] - sd[1] * sd[1];
    assert!(
        (d1 - 0.25).abs() < 1e-12 && (d2 - 0.25).abs() < 1e-12,
        "{d1} {d2}"
    );
}

/// An observable that is an exact combination of another (b = 2 a, no measurement error):
/// consistent data are filtered with b skipped (singular F), contradicting data are exit 1
/// naming the observable and the period, with nothing written.
#[test]
fn an_exact_combination_is_skipped_or_named_when_contradicted() {
    let m = crate::support::temp_model(
        "endogenous\n x\nexogenous\n e\nparameters\n rho = 0.5\nequations\n x = rho * x[t-1] + e\nobservables\n a = x\n b = 2 * x\n",
    );
    let dir = tempfile::tempdir().unwrap();
    let good = dir.path().join("good.csv");
    std::fs::write(&good, "period,a,b\n1,1,2\n2,0.5,1\n3,0.2,0.4\n").unwrap();
    let mp = m.path().to_str().unwrap();
    let v = json(&[
        "filter",
        mp,
        "--data",
        good.to_str().unwrap(),
        "--format",
        "json",
    ]);
    assert_eq!(v["likelihood"]["skipped_exact_combinations"], 3);
    assert_eq!(v["likelihood"]["observations_used"], 3);
    let bad = dir.path().join("bad.csv");
    std::fs::write(&bad, "period,a,b\nq1,1,2\nq2,0.5,1.3\nq3,0.2,0.4\n").unwrap();
    let target = dir.path().join("out.txt");
    let out = saddle(&[
        "filter",
        mp,
        "--data",
        bad.to_str().unwrap(),
        "-o",
        target.to_str().unwrap(),
    ]);
    assert_eq!(code(&out), 1, "{}", text(&out.stderr));
    let err = text(&out.stderr);
    assert!(err.contains("b in period q2"), "{err}");
    assert!(!target.exists());
}
