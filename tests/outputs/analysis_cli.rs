//! `saddle moments`, `simulate` and `sweep` through the binary: formats, exit statuses, seeds.

use crate::support::{model_path as model, saddle};

fn harbour() -> String {
    model("harbour.saddle").to_string_lossy().into_owned()
}

#[test]
fn moments_json_from_the_binary() {
    let out = saddle(&[
        "moments",
        &harbour(),
        "--format",
        "json",
        "--horizons",
        "1,40",
    ]);
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(v["variables"][0], "gap");
    assert!((v["std"]["drift"].as_f64().unwrap() - 0.3125).abs() < 1e-12);
    assert_eq!(v["autocorrelation"]["gap"].as_array().unwrap().len(), 5);
    assert!(
        v["variance_decomposition"]["rate"]["e_cost"]
            .as_f64()
            .unwrap()
            > 0.9
    );
    assert_eq!(v["fevd"][1]["horizon"], 40);
}

#[test]
fn moments_of_an_indeterminate_model_exit_3_with_the_diagnosis() {
    let out = saddle(&[
        "moments",
        &harbour(),
        "--set",
        "phi_pi=0.5",
        "--format",
        "json",
    ]);
    assert_eq!(out.status.code(), Some(3));
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(v["status"], "indeterminate");
    assert!(v["diagnosis"].is_string());
    assert!(String::from_utf8_lossy(&out.stderr).contains("unique stable solution"));
}

#[test]
fn bad_options_exit_2() {
    for args in [
        vec!["moments", "MODEL", "--horizons", "0"],
        vec!["moments", "MODEL", "--lags", "100000"],
        vec!["sweep", "MODEL", "--vary", "nope=0:1:3"],
        vec!["sweep", "MODEL", "--vary", "phi_pi=0:1"],
        vec!["simulate", "MODEL", "--periods", "100000000000"],
    ] {
        let h = harbour();
        let args: Vec<&str> = args
            .iter()
            .map(|a| if *a == "MODEL" { h.as_str() } else { a })
            .collect();
        let out = saddle(&args);
        assert_eq!(
            out.status.code(),
            Some(2),
            "{args:?}: {}",
            String::from_utf8_lossy(&out.stderr)
        );
        assert!(!out.stderr.is_empty());
    }
}

#[test]
fn simulate_is_reproducible_through_the_binary() {
    let harbour = harbour();
    let csv = ["--format", "csv"];
    let run = |seed: &str| {
        let mut a = vec![
            "simulate",
            harbour.as_str(),
            "--seed",
            seed,
            "--periods",
            "50",
        ];
        a.extend(csv);
        saddle(&a)
    };
    let (a, b, c) = (run("11"), run("11"), run("12"));
    assert_eq!(a.status.code(), Some(0));
    assert_eq!(a.stdout, b.stdout);
    assert_ne!(a.stdout, c.stdout);
    let text = String::from_utf8(a.stdout).unwrap();
    assert!(text.starts_with("period,gap,infl,rate,drift\n"));
    assert_eq!(text.lines().count(), 51);
    let tidy = saddle(&[
        "simulate",
        &harbour,
        "--periods",
        "3",
        "--layout",
        "tidy",
        "--format",
        "csv",
    ]);
    let t = String::from_utf8(tidy.stdout).unwrap();
    assert_eq!(t.lines().count(), 13);
    assert!(t.lines().nth(1).unwrap().starts_with("1,gap,"));
}

#[test]
fn sweep_csv_and_json_from_the_binary() {
    let out = saddle(&[
        "sweep",
        &harbour(),
        "--vary",
        "phi_pi=0.9:1.1:5",
        "--vary",
        "phi_y=0:1:3",
        "--format",
        "csv",
    ]);
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let text = String::from_utf8(out.stdout).unwrap();
    let mut lines = text.lines();
    assert_eq!(
        lines.next().unwrap(),
        "phi_pi,phi_y,status,unstable,forward_looking,largest_stable_modulus,message"
    );
    assert_eq!(lines.count(), 15);
    assert!(text.contains("0.9,0,indeterminate,1,2,"));
    let out = saddle(&[
        "sweep",
        &harbour(),
        "--vary",
        "phi_pi=0.5:1.5:3",
        "--format",
        "json",
    ]);
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let rows = v.as_array().unwrap();
    assert_eq!(rows.len(), 3);
    assert_eq!(rows[0]["status"], "indeterminate");
    assert_eq!(rows[2]["status"], "determinate");
    assert_eq!(rows[2]["unstable"], 2);
}

#[test]
fn sweep_points_that_fail_become_error_rows() {
    // theta = 0 divides by zero in kappa: that point is an error row with a message, and the
    // sweep still exits 0 with every row.
    let out = saddle(&[
        "sweep",
        &harbour(),
        "--vary",
        "theta=0:0.5:3",
        "--format",
        "csv",
    ]);
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let text = String::from_utf8(out.stdout).unwrap();
    let rows: Vec<&str> = text.lines().skip(1).collect();
    assert_eq!(rows.len(), 3);
    assert!(rows[0].starts_with("0,error,,,,"), "{}", rows[0]);
    assert!(rows[0].len() > "0,error,,,,".len());
    assert!(rows[2].starts_with("0.5,determinate") || rows[2].starts_with("0.5,indeterminate"));
}

#[test]
fn simulate_and_sweep_plots_are_written_as_svg() {
    let dir = tempfile::tempdir().unwrap();
    let sim = dir.path().join("paths.svg");
    let map = dir.path().join("map.svg");
    let h = harbour();
    let out = saddle(&[
        "simulate",
        &h,
        "--periods",
        "50",
        "--plot",
        sim.to_str().unwrap(),
    ]);
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let svg = std::fs::read_to_string(&sim).unwrap();
    assert!(svg.starts_with("<svg") && svg.trim_end().ends_with("</svg>"));
    // One panel per declared variable, each titled by its name.
    for v in ["gap", "infl", "rate", "drift"] {
        assert!(svg.contains(&format!(">{v}<")), "panel {v} missing");
    }
    let out = saddle(&[
        "sweep",
        &h,
        "--vary",
        "phi_pi=0:3:31",
        "--plot",
        map.to_str().unwrap(),
    ]);
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let svg = std::fs::read_to_string(&map).unwrap();
    assert!(svg.contains("determinate") && svg.contains("indeterminate"));
}
