//! The commands that draw: `saddle report` and `saddle irf --plot`, run as a user would.
//!
//! With `SADDLE_GALLERY=DIR` set, the outputs are also copied to DIR for rendering and looking.

use crate::support::{code, saddle};
use std::path::Path;

fn keep(from: &Path, name: &str) {
    if let Ok(dir) = std::env::var("SADDLE_GALLERY") {
        std::fs::create_dir_all(&dir).unwrap();
        std::fs::copy(from, Path::new(&dir).join(name)).unwrap();
    }
}

#[test]
fn report_of_the_demo_models_is_a_complete_page() {
    let dir = tempfile::tempdir().unwrap();
    for model in ["harbour", "island_growth", "ferry"] {
        let out = dir.path().join(format!("{model}.html"));
        let o = saddle(&[
            "report",
            &format!("models/{model}.saddle"),
            "-o",
            out.to_str().unwrap(),
        ]);
        assert_eq!(
            code(&o),
            0,
            "{model}: {}",
            String::from_utf8_lossy(&o.stderr)
        );
        let html = std::fs::read_to_string(&out).unwrap();
        keep(&out, &format!("cli_report_{model}.html"));
        assert!(html.starts_with("<!DOCTYPE html>"));
        assert!(html.ends_with("</html>\n"));
        for id in [
            "summary",
            "calibration",
            "steady-state",
            "roots",
            "solution",
            "impulse-responses",
            "moments",
        ] {
            assert!(
                html.contains(&format!("<section id=\"{id}\">")),
                "{model}: no {id}"
            );
        }
        assert!(
            html.contains("<figure class=\"chart\""),
            "{model}: no chart"
        );
        assert!(html.contains("conditional on the model and its calibration"));
        assert!(!html.contains("https://") && !html.contains("<link"));
        // No temporary file is left beside the page.
        let leftovers = std::fs::read_dir(dir.path())
            .unwrap()
            .filter(|e| {
                e.as_ref()
                    .unwrap()
                    .file_name()
                    .to_string_lossy()
                    .contains("saddle-tmp")
            })
            .count();
        assert_eq!(leftovers, 0);
    }
}

#[test]
fn report_of_an_indeterminate_calibration_exits_3_with_the_diagnosis() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("indet.html");
    let o = saddle(&[
        "report",
        "models/harbour.saddle",
        "--set",
        "phi_pi=0.9",
        "-o",
        out.to_str().unwrap(),
    ]);
    assert_eq!(code(&o), 3);
    let html = std::fs::read_to_string(&out).unwrap();
    assert!(html.contains("Indeterminate: no unique stable solution."));
    assert!(html.contains("set on the command line"));
    assert!(html.contains("No impulse responses"));
    assert!(!html.contains("<figure class=\"chart\""));
}

#[test]
fn irf_plot_writes_one_grid_per_shock_and_nothing_without_a_solution() {
    let dir = tempfile::tempdir().unwrap();
    let plot = dir.path().join("irf.svg");
    let o = saddle(&[
        "irf",
        "models/harbour.saddle",
        "--format",
        "csv",
        "--plot",
        plot.to_str().unwrap(),
    ]);
    assert_eq!(code(&o), 0, "{}", String::from_utf8_lossy(&o.stderr));
    let svg = std::fs::read_to_string(&plot).unwrap();
    keep(&plot, "cli_irf_harbour.svg");
    assert_eq!(svg.matches("<g class=\"grid\"").count(), 2);
    assert_eq!(svg.matches("<g class=\"panel\"").count(), 8);
    assert!(svg.contains("impulse in e_rate (policy surprise)"));
    assert!(svg.contains("output gap, percent"));

    let none = dir.path().join("none.svg");
    let o = saddle(&[
        "irf",
        "models/harbour.saddle",
        "--set",
        "phi_pi=0.9",
        "--plot",
        none.to_str().unwrap(),
    ]);
    assert_eq!(code(&o), 3);
    assert!(!none.exists());
    assert!(String::from_utf8_lossy(&o.stderr).contains("no plot"));
}

#[test]
fn unwritable_report_path_is_a_clear_error() {
    let o = saddle(&[
        "report",
        "models/harbour.saddle",
        "-o",
        "/nonexistent-dir/sub/report.html",
    ]);
    assert_eq!(code(&o), 2);
    assert!(String::from_utf8_lossy(&o.stderr).contains("cannot write"));
}
