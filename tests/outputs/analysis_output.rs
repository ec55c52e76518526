//! The JSON and CSV shapes of `moments` and `simulate` (cli.md contract), on small systems built
//! directly.

use nalgebra::DMatrix;
use saddle::analysis::moments::moments;
use saddle::analysis::simulate::{simulate, SimulationSettings};
use saddle::solution::{Counts, SolvedModel, StateSpace, Status};

fn two_variable_model() -> SolvedModel {
    SolvedModel {
        title: Some("test".into()),
        status: Status::Determinate,
        threshold: 1.0,
        counts: Counts {
            stable: 1,
            unstable: 0,
            forward_looking: 0,
            predetermined: 1,
        },
        roots: vec![],
        variables: vec!["gap".into(), "infl".into()],
        log: vec![false, true],
        shocks: vec!["e_rate".into(), "e_cost".into()],
        steady_state: vec![0.0, 1.5],
        covariance: DMatrix::from_row_slice(2, 2, &[0.0625, 0.0, 0.0, 0.01]),
        diagnosis: None,
        warnings: vec![],
        solution: Some(StateSpace {
            states: vec!["drift[t-1]".into()],
            p: DMatrix::from_row_slice(2, 1, &[-0.5, -0.2]),
            q: DMatrix::from_row_slice(2, 2, &[-0.8, -0.3, -0.3, 0.9]),
            g: DMatrix::from_row_slice(1, 1, &[0.6]),
            h: DMatrix::from_row_slice(1, 2, &[1.0, 0.0]),
        }),
    }
}

#[test]
fn moments_json_has_the_contract_fields() {
    let sm = two_variable_model();
    let m = moments(&sm, 3, &[1, 8]).unwrap();
    let s = saddle::output::moments::to_json(&m).to_pretty_string();
    let v: serde_json::Value = serde_json::from_str(&s).unwrap();
    assert_eq!(v["variables"], serde_json::json!(["gap", "infl"]));
    assert!((v["std"]["gap"].as_f64().unwrap() - m.std[0].unwrap()).abs() < 1e-15);
    assert_eq!(v["correlation"].as_array().unwrap().len(), 2);
    assert_eq!(v["correlation"][0][0], 1.0);
    assert_eq!(v["autocorrelation"]["infl"].as_array().unwrap().len(), 3);
    let vd = &v["variance_decomposition"]["gap"];
    let sum = vd["e_rate"].as_f64().unwrap() + vd["e_cost"].as_f64().unwrap();
    assert!((sum - 1.0).abs() < 1e-12);
    assert_eq!(v["fevd"][1]["horizon"], 8);
    assert!(v["nonstationary"].as_array().unwrap().is_empty());
    let csv = saddle::output::moments::to_csv(&m);
    assert!(csv.starts_with("statistic,variable,against,horizon,value\n"));
    assert_eq!(
        csv.lines().filter(|l| l.starts_with("fevd_share,")).count(),
        8
    );
    let text = saddle::output::moments::to_text(&m, Some("test"));
    assert!(
        text.contains("Shares of each innovation")
            && text.contains("lag 3")
            && text.contains("half-life")
    );
}

#[test]
fn simulate_csv_layouts_and_json() {
    let sm = two_variable_model();
    let sim = simulate(
        &sm,
        &SimulationSettings {
            seed: 3,
            periods: 5,
            burn_in: 2,
            levels: true,
        },
    )
    .unwrap();
    let wide = saddle::output::simulate::to_csv_wide(&sim);
    let rows: Vec<&str> = wide.lines().collect();
    assert_eq!(rows[0], "period,gap,infl");
    assert_eq!(rows.len(), 6);
    let cells: Vec<f64> = rows[1].split(',').map(|c| c.parse().unwrap()).collect();
    assert_eq!(cells[0], 1.0);
    assert_eq!(cells[1], sim.paths[(0, 0)]);
    assert_eq!(cells[2], sim.paths[(0, 1)]);
    let tidy = saddle::output::simulate::to_csv_tidy(&sim);
    let rows: Vec<&str> = tidy.lines().collect();
    assert_eq!(rows[0], "period,variable,value");
    assert_eq!(rows.len(), 11);
    assert!(rows[2].starts_with("1,infl,"));
    let v: serde_json::Value =
        serde_json::from_str(&saddle::output::simulate::to_json(&sim).to_pretty_string()).unwrap();
    assert_eq!(v["seed"], 3);
    assert_eq!(v["levels"], true);
    assert_eq!(v["paths"]["infl"].as_array().unwrap().len(), 5);
    // serde_json's default parser may be one ulp off (it lacks its exact float_roundtrip
    // feature here); the text itself is the shortest exact form, as Rust's parser shows.
    let x = v["paths"]["infl"][4].as_f64().unwrap();
    assert!((x - sim.paths[(4, 1)]).abs() <= 2.0 * f64::EPSILON * x.abs());
    // The writer itself is exact: the Json number reads back bit for bit with Rust's parser.
    let one = saddle::output::ordered_json::Json::Number(sim.paths[(4, 1)]).to_pretty_string();
    assert_eq!(one.trim().parse::<f64>().unwrap(), sim.paths[(4, 1)]);
}
