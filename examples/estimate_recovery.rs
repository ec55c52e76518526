//! Parameter recovery on the demo model: simulate data sets from models/island_estimate.saddle at
//! its calibration (seeds 1..=R, 120 periods after 200 burn-in), estimate each (mode from one
//! start, 4 chains x 2,000 draws after 1,000 burn-in), and count how often the 90 percent
//! posterior interval [q05, q95] covers the value the data came from. Release mode:
//!
//! ```text
//! cargo run --release --example estimate_recovery -- 20
//! ```
//!
//! The observables of the demo are linear in the variables (gap_obs = gap, infl_obs = 2 + 4 infl,
//! rate_obs = 3 + 4 rate); the data are built from the simulated deviations by those formulas.

use nalgebra::DMatrix;
use saddle::analysis::simulate::{simulate, SimulationSettings};
use saddle::estimation::{self, DiagnosticParams, McmcParams, ModeParams, Posterior};
use saddle::policy::Regime;
use saddle::solution::{solve, SolveOptions};

fn main() {
    let reps: u64 = std::env::args()
        .nth(1)
        .and_then(|s| s.parse().ok())
        .unwrap_or(20);
    let root = env!("CARGO_MANIFEST_DIR");
    let src = std::fs::read_to_string(format!("{root}/models/island_estimate.saddle"))
        .expect("the demo model is readable");
    let model = saddle::model::check_source(&src).expect("the demo model checks");
    let solved = solve(&model, &SolveOptions::default()).expect("the demo solves");
    let names = model.variable_names();
    let col = |n: &str| names.iter().position(|v| v == n).expect("variable");
    let (g, i, r) = (col("gap"), col("infl"), col("rate"));
    let mut covered: Vec<usize> = Vec::new();
    let mut truth: Vec<f64> = Vec::new();
    let mut qnames: Vec<String> = Vec::new();
    for seed in 1..=reps {
        let sim = simulate(
            &solved,
            &SimulationSettings {
                seed,
                periods: 120,
                burn_in: 200,
                levels: false,
            },
        )
        .expect("the demo simulates");
        let n = sim.paths.nrows();
        let data = DMatrix::from_fn(n, 3, |t, j| match j {
            0 => sim.paths[(t, g)],
            1 => 2.0 + 4.0 * sim.paths[(t, i)],
            _ => 3.0 + 4.0 * sim.paths[(t, r)],
        });
        let post = Posterior::new(&model, &data, SolveOptions::default(), Regime::Rule)
            .expect("the posterior builds");
        if truth.is_empty() {
            truth = post.calibration();
            qnames = post.quantities.iter().map(|q| q.name.clone()).collect();
            covered = vec![0; truth.len()];
        }
        let est = estimation::estimate(
            &post,
            &ModeParams {
                starts: 1,
                ..ModeParams::default()
            },
            Some(&McmcParams {
                chains: 4,
                draws: 2000,
                burn_in: 1000,
                seed,
                ..McmcParams::default()
            }),
            &DiagnosticParams::default(),
            None,
            None,
        );
        match est {
            Ok(e) => {
                for (k, s) in e.summaries.iter().enumerate() {
                    if s.q05 <= truth[k] && truth[k] <= s.q95 {
                        covered[k] += 1;
                    }
                }
                let worst = e.summaries.iter().map(|s| s.rhat).fold(0.0, f64::max);
                println!("seed {seed}: done (largest R-hat {worst:.3})");
            }
            Err(e) => println!("seed {seed}: failed: {e}"),
        }
    }
    println!("coverage of the 90 percent intervals over {reps} data sets:");
    for (k, n) in qnames.iter().enumerate() {
        println!(
            "  {n:<12} true {:<6} covered {}/{reps} = {:.2}",
            truth[k],
            covered[k],
            covered[k] as f64 / reps as f64
        );
    }
}
