//! Posterior bands (`--draws PATH.csv` on irf, moments, filter, forecast) through the binary:
//! quantiles against a direct computation on tiny draws files, draws without a unique stable
//! solution counted, the provenance of the draws, and bad draws files.
//!
//! The direct computation: in models/island_estimate.saddle the rule disturbance is an AR(1),
//! `drift = rho_r drift[t-1] + e_rate`, so its response h periods after a one-sd impulse of
//! e_rate is rho_r^h sd(e_rate) (the closed form of an AR(1) impulse response). Quantiles are
//! numpy's default (linear interpolation between order statistics, Hyndman and Fan 1996 type 7),
//! worked by hand below.

use sha2::{Digest, Sha256};

use crate::support::{code, saddle, text};

const MODEL: &str = "models/island_estimate.saddle";
const DATA: &str = "models/island_estimate.csv";

fn draws_file(dir: &tempfile::TempDir, name: &str, body: &str) -> String {
    let p = dir.path().join(name);
    std::fs::write(&p, body).unwrap();
    p.to_str().unwrap().to_string()
}

fn json(args: &[&str]) -> (i32, serde_json::Value, String) {
    let o = saddle(args);
    let v = serde_json::from_str(&text(&o.stdout)).unwrap_or(serde_json::Value::Null);
    (code(&o), v, text(&o.stderr))
}

fn close(a: f64, b: f64) -> bool {
    // Relative tolerance: the responses are products of a few doubles.
    (a - b).abs() <= 1e-12 * b.abs().max(1e-300)
}

/// Five draws of (rho_r, sd(e_rate)), both increasing together, so every drift response is
/// increasing in the row and its quantiles are the responses at the quantiles of the rows.
const FIVE: &str = "seed,chain,draw,rho_r,sd(e_rate),logpost\n\
                    1,1,1,0.3,0.1,-1\n1,1,2,0.5,0.3,-1\n1,1,3,0.4,0.2,-1\n\
                    1,1,4,0.7,0.5,-1\n1,1,5,0.6,0.4,-1\n";

#[test]
fn irf_quantiles_match_the_closed_form_on_a_tiny_draws_file() {
    let dir = tempfile::tempdir().unwrap();
    let f = draws_file(&dir, "five.csv", FIVE);
    let (c, v, err) = json(&[
        "irf",
        MODEL,
        "--shock",
        "e_rate",
        "--horizon",
        "3",
        "--draws",
        &f,
        "--format",
        "json",
    ]);
    assert_eq!(c, 0, "{err}");
    let b = &v["bands"];
    assert_eq!(b["quantiles"], serde_json::json!([0.05, 0.5, 0.95]));
    assert_eq!(b["draws"]["rows"], 5);
    assert_eq!(b["draws"]["used"], 5);
    assert_eq!(b["draws"]["failed"], 0);
    let q = |name: &str, h: usize| b[name]["e_rate"]["drift"][h].as_f64().unwrap();
    // h = 1: rho sd over the rows = 0.03, 0.15, 0.08, 0.35, 0.24; sorted 0.03 0.08 0.15 0.24
    // 0.35; q05 at position 0.2: 0.03 + 0.2 (0.05) = 0.04; q95 at 3.8: 0.24 + 0.8 (0.11).
    assert!(close(q("q05", 1), 0.04), "{}", q("q05", 1));
    assert!(close(q("q50", 1), 0.15), "{}", q("q50", 1));
    assert!(close(q("q95", 1), 0.24 + 0.8 * 0.11), "{}", q("q95", 1));
    // Impact: sd itself, 0.1 .. 0.5; the median row (0.5, 0.3) at h = 3: 0.5^3 0.3.
    assert!(close(q("q05", 0), 0.1 + 0.2 * 0.1));
    assert!(close(q("q50", 3), 0.5f64.powi(3) * 0.3));
    // The point answer stays the calibration's: rho_r = 0.5, sd = 0.2.
    assert!(close(
        v["responses"]["e_rate"]["drift"][1].as_f64().unwrap(),
        0.1
    ));
    // Provenance names the draws file and its hash.
    let sha: String = Sha256::digest(FIVE.as_bytes())
        .iter()
        .map(|x| format!("{x:02x}"))
        .collect();
    assert_eq!(v["provenance"]["draws"][0]["sha256"], sha.as_str());
    assert_eq!(b["draws"]["files"][0]["sha256"], sha.as_str());
}

#[test]
fn bands_hold_the_answer_at_the_posterior_mean_and_csv_text_agree() {
    // rho_r symmetric around the calibration 0.5 (the posterior mean of these draws): drift at
    // h = 1 is linear in rho_r, so its median is the answer at the mean, and at every h the
    // answer at the mean lies between q05 and q95 (rho^h is increasing; the other variables'
    // responses need not be monotone in rho_r, so nothing is certain about them).
    let dir = tempfile::tempdir().unwrap();
    let f = draws_file(
        &dir,
        "sym.csv",
        "seed,chain,draw,rho_r,logpost\n1,1,1,0.4,0\n1,1,2,0.45,0\n1,1,3,0.5,0\n1,2,1,0.55,0\n1,2,2,0.6,0\n",
    );
    let (c, v, err) = json(&[
        "irf",
        MODEL,
        "--shock",
        "e_rate",
        "--horizon",
        "8",
        "--draws",
        &f,
        "--format",
        "json",
    ]);
    assert_eq!(c, 0, "{err}");
    assert_eq!(v["bands"]["draws"]["chains"], 2);
    for var in ["drift"] {
        for h in 0..=8 {
            let p = v["responses"]["e_rate"][var][h].as_f64().unwrap();
            let lo = v["bands"]["q05"]["e_rate"][var][h].as_f64().unwrap();
            let hi = v["bands"]["q95"]["e_rate"][var][h].as_f64().unwrap();
            let (lo, hi) = (lo.min(hi), lo.max(hi));
            assert!(
                p >= lo - 1e-12 && p <= hi + 1e-12,
                "{var}[{h}]: {p} outside [{lo}, {hi}]"
            );
        }
    }
    let mid = v["bands"]["q50"]["e_rate"]["drift"][1].as_f64().unwrap();
    assert!(close(mid, 0.1), "{mid}");
    // CSV: the irf columns, the value, the quantiles.
    let o = saddle(&[
        "irf",
        MODEL,
        "--shock",
        "e_rate",
        "--horizon",
        "2",
        "--draws",
        &f,
        "--format",
        "csv",
    ]);
    let csv = text(&o.stdout);
    assert_eq!(
        csv.lines().next(),
        Some("shock,variable,period,value,q05,q50,q95")
    );
    assert_eq!(csv.lines().count(), 1 + 5 * 3);
    // Text: says how many draws and from which file.
    let o = saddle(&["irf", MODEL, "--horizon", "2", "--draws", &f]);
    let t = text(&o.stdout);
    assert!(
        t.contains("Posterior bands over all 5 draws from 2 chains of"),
        "{t}"
    );
    assert!(t.contains("every draw has a unique stable solution"), "{t}");
}

#[test]
fn draws_without_a_unique_stable_solution_are_counted_not_fatal() {
    // phi_pi = 0.5 breaks the Taylor principle: that draw is indeterminate.
    let dir = tempfile::tempdir().unwrap();
    let f = draws_file(
        &dir,
        "mixed.csv",
        "seed,chain,draw,phi_pi,logpost\n1,1,1,1.6,0\n1,1,2,0.5,0\n1,1,3,1.8,0\n",
    );
    let (c, v, err) = json(&["moments", MODEL, "--draws", &f, "--format", "json"]);
    assert_eq!(c, 0, "{err}");
    let d = &v["bands"]["draws"];
    assert_eq!(d["used"], 3);
    assert_eq!(d["failed"], 1);
    assert_eq!(d["failures"][0]["row"], 3, "{d}");
    assert!(d["failures"][0]["reason"]
        .as_str()
        .unwrap()
        .contains("indeterminate"));
    // Two draws left: q05 and q95 lie between their std's, q50 their mean (type 7, n = 2).
    let s = &v["bands"];
    let (lo, mid, hi) = (
        s["q05"]["std"]["gap"].as_f64().unwrap(),
        s["q50"]["std"]["gap"].as_f64().unwrap(),
        s["q95"]["std"]["gap"].as_f64().unwrap(),
    );
    assert!(lo < mid && mid < hi, "{lo} {mid} {hi}");
    let (_, at16, _) = json(&["moments", MODEL, "--set", "phi_pi=1.6", "--format", "json"]);
    let (_, at18, _) = json(&["moments", MODEL, "--set", "phi_pi=1.8", "--format", "json"]);
    let a = at16["std"]["gap"].as_f64().unwrap();
    let b = at18["std"]["gap"].as_f64().unwrap();
    assert!(close(mid, 0.5 * (a + b)), "{mid} vs {a} {b}");
    assert!(close(lo, a.min(b) + 0.05 * (a - b).abs()), "{lo}");
    // Every draw failing is a numerical failure (exit 4), nothing on stdout.
    let g = draws_file(
        &dir,
        "bad.csv",
        "seed,chain,draw,phi_pi,logpost\n1,1,1,0.5,0\n",
    );
    let o = saddle(&["moments", MODEL, "--draws", &g]);
    assert_eq!(code(&o), 4, "{}", text(&o.stderr));
    assert!(o.stdout.is_empty());
    assert!(text(&o.stderr).contains("none of the 1 draws"));
}

#[test]
fn bad_draws_files_exit_1_with_line_and_column_and_write_nothing() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("out.json");
    let outs = out.to_str().unwrap();
    let cases = [
        (
            "no_logpost.csv",
            "seed,chain,draw,rho_r\n1,1,1,0.5\n",
            ":1:4:",
        ),
        (
            "unknown.csv",
            "seed,chain,draw,rho_x,logpost\n1,1,1,0.5,0\n",
            ":1:4: `rho_x` is not a parameter",
        ),
        (
            "text.csv",
            "seed,chain,draw,rho_r,logpost\n1,1,1,0.5,0\n1,1,2,abc,0\n",
            ":3:4 (rho_r): `abc` is not a finite number",
        ),
        (
            "short.csv",
            "seed,chain,draw,rho_r,logpost\n1,1,1,0.5\n",
            ":2:5 (logpost)",
        ),
        ("empty.csv", "", "is empty"),
    ];
    for (name, body, want) in cases {
        let f = draws_file(&dir, name, body);
        for cmd in ["irf", "moments"] {
            let o = saddle(&[cmd, MODEL, "--draws", &f, "-o", outs, "--format", "json"]);
            let err = text(&o.stderr);
            assert_eq!(code(&o), 1, "{name} {cmd}: {err}");
            assert!(err.contains(want), "{name}: {err}");
            assert!(!out.exists(), "{name}: an output was written");
        }
        let o = saddle(&["filter", MODEL, "--data", DATA, "--draws", &f]);
        assert_eq!(code(&o), 1, "{name} filter");
        assert!(o.stdout.is_empty());
    }
    let f = draws_file(&dir, "ok.csv", FIVE);
    let o = saddle(&["decompose", MODEL, "--data", DATA, "--draws", &f]);
    assert_eq!(code(&o), 2);
}

#[test]
fn filter_and_forecast_bands_and_merged_files() {
    let dir = tempfile::tempdir().unwrap();
    let a = draws_file(&dir, "a.csv", FIVE);
    let b = draws_file(
        &dir,
        "b.csv",
        "seed,chain,draw,rho_r,sd(e_rate),logpost\n2,1,1,0.45,0.25,-1\n",
    );
    let (c, v, err) = json(&[
        "forecast",
        MODEL,
        "--data",
        DATA,
        "--horizon",
        "4",
        "--draws",
        &a,
        "--draws",
        &b,
        "--format",
        "json",
    ]);
    assert_eq!(c, 0, "{err}");
    assert_eq!(v["bands"]["draws"]["rows"], 6);
    assert_eq!(v["bands"]["draws"]["chains"], 2);
    assert_eq!(v["provenance"]["draws"].as_array().unwrap().len(), 2);
    let m = v["mean"]["rate_obs"][0].as_f64().unwrap();
    let lo = v["bands"]["q05"]["mean"]["rate_obs"][0].as_f64().unwrap();
    let hi = v["bands"]["q95"]["mean"]["rate_obs"][0].as_f64().unwrap();
    assert!(lo <= hi && m.is_finite(), "{lo} {hi}");
    let (c, v, err) = json(&[
        "filter",
        MODEL,
        "--data",
        DATA,
        "--draws",
        &a,
        "--max-draws",
        "3",
        "--format",
        "json",
    ]);
    assert_eq!(c, 0, "{err}");
    assert_eq!(v["bands"]["draws"]["used"], 3);
    assert_eq!(v["bands"]["draws"]["thinning"], "evenly spaced");
    let ll = v["loglik"].as_f64().unwrap();
    assert!(v["bands"]["q50"]["loglik"].as_f64().unwrap() < ll + 50.0);
    assert_eq!(
        v["bands"]["q50"]["smoothed"]["drift"]
            .as_array()
            .unwrap()
            .len(),
        v["periods"].as_array().unwrap().len()
    );
}

#[test]
fn report_gains_an_estimation_section_from_draws() {
    let dir = tempfile::tempdir().unwrap();
    let f = draws_file(&dir, "five.csv", FIVE);
    let page = dir.path().join("r.html");
    let o = saddle(&["report", MODEL, "-o", page.to_str().unwrap(), "--draws", &f]);
    assert_eq!(code(&o), 0, "{}", text(&o.stderr));
    let h = std::fs::read_to_string(&page).unwrap();
    assert!(h.contains("<a href=\"#estimation\">"));
    let sec = &h[h.find("id=\"estimation\"").unwrap()..];
    // rho_r over the five draws: mean 0.5, q50 0.5, q05 0.3 + 0.2 (0.1) = 0.32 (type 7).
    assert!(
        sec.contains("<tr><td>rho_r</td><td class=\"num\">0.5000</td>"),
        "{}",
        &sec[..1500.min(sec.len())]
    );
    assert!(sec.contains("<td class=\"num\">0.3200</td>"));
    assert!(sec.contains("Posterior bands over all 5 draws"));
    assert!(sec.contains("<svg"));
    // A bad draws file: exit 1, no page.
    let bad = draws_file(
        &dir,
        "bad.csv",
        "seed,chain,draw,rho_r,logpost\n1,1,1,x,0\n",
    );
    let page2 = dir.path().join("r2.html");
    let o = saddle(&[
        "report",
        MODEL,
        "-o",
        page2.to_str().unwrap(),
        "--draws",
        &bad,
    ]);
    assert_eq!(code(&o), 1);
    assert!(!page2.exists());
}
