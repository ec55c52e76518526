//! Speed of estimation on the demo model (models/island_estimate.saddle with its data):
//! likelihood evaluations per second, the mode search, and the wall time of 4 chains x 25,000
//! kept draws (5,000 burn-in each). Run in release mode, once per thread count:
//!
//! ```text
//! RAYON_NUM_THREADS=1 cargo run --release --example estimate_timing
//! RAYON_NUM_THREADS=2 cargo run --release --example estimate_timing
//! ```
//!
//! The draws are the same on any number of threads (each chain has its own stream); the example
//! prints a checksum of them to show it.

use std::time::Instant;

use saddle::estimation::{self, McmcParams, ModeParams, Posterior};
use saddle::policy::Regime;
use saddle::solution::SolveOptions;

fn main() {
    let root = env!("CARGO_MANIFEST_DIR");
    let src = std::fs::read_to_string(format!("{root}/models/island_estimate.saddle"))
        .expect("the demo model is readable");
    let model = saddle::model::check_source(&src).expect("the demo model checks");
    let bytes = std::fs::read(format!("{root}/models/island_estimate.csv"))
        .expect("the demo data are readable");
    let names: Vec<String> = model.observables.iter().map(|o| o.name.clone()).collect();
    let data = saddle::data::read_data(&bytes, &names, 1).expect("the demo data read");
    let post = Posterior::new(&model, &data.values, SolveOptions::default(), Regime::Rule)
        .expect("the posterior builds");
    let x0 = post.calibration();
    let n = 2000;
    let t = Instant::now();
    let mut acc = 0.0;
    for i in 0..n {
        let mut x = x0.clone();
        x[0] += 1e-6 * (i % 7) as f64;
        acc += post.log_posterior(&x);
    }
    let per = t.elapsed().as_secs_f64() / n as f64;
    println!(
        "threads: {}",
        std::env::var("RAYON_NUM_THREADS").unwrap_or_else(|_| "default".into())
    );
    println!(
        "posterior evaluations (solve + Kalman likelihood, {} periods, {} observables): {:.0} per second ({:.1} us each; checksum {:.6})",
        data.values.nrows(),
        data.values.ncols(),
        1.0 / per,
        per * 1e6,
        acc / n as f64
    );
    forty_states(&data.values);
    let t = Instant::now();
    let mode = estimation::find_mode(&post, &ModeParams::default()).expect("the mode is found");
    println!(
        "mode search: {:.2} s, {} evaluations, log posterior {:.4}",
        t.elapsed().as_secs_f64(),
        mode.evaluations,
        mode.log_posterior
    );
    let sz = estimation::proposal_covariance(&post, &mode);
    let z = post.to_z(&mode.x);
    let p = McmcParams {
        chains: 4,
        draws: 25_000,
        burn_in: 5_000,
        seed: 1,
        ..McmcParams::default()
    };
    let t = Instant::now();
    let chains = estimation::run_chains(&post, &z, &sz, &p, None, None).expect("the chains run");
    let wall = t.elapsed().as_secs_f64();
    let sum: f64 = chains.iter().map(|c| c.x.sum()).sum();
    let acc: Vec<String> = chains
        .iter()
        .map(|c| format!("{:.3}", c.acceptance))
        .collect();
    println!(
        "4 chains x 25,000 draws (+5,000 burn-in): {wall:.2} s wall; acceptance {}; checksum of the draws {sum:.10}",
        acc.join(", ")
    );
    let s = estimation::summarise(post.dim(), &chains);
    let worst = s.iter().map(|s| s.rhat).fold(0.0, f64::max);
    let least = s.iter().map(|s| s.ess).fold(f64::INFINITY, f64::min);
    println!("largest R-hat {worst:.4}, smallest bulk ESS {least:.0}");
}

/// Posterior evaluations of a model with 40 states: 40 first-order processes x_i = rho_i
/// x_i[t-1] + e_i (rho_i from 0.5 to 0.89), three observables each the sum of every third
/// process, priors on rho_1 and sd(e_1); data: the demo's 120 periods of 3 series (the numbers
/// only set the likelihood's value, not its cost).
fn forty_states(data: &nalgebra::DMatrix<f64>) {
    let n = 40;
    let mut src = String::from("endogenous\n");
    for i in 1..=n {
        src.push_str(&format!("  x{i}\n"));
    }
    src.push_str("exogenous\n");
    for i in 1..=n {
        src.push_str(&format!("  e{i}\n"));
    }
    src.push_str("parameters\n");
    for i in 1..=n {
        src.push_str(&format!("  rho{i} = {}\n", 0.5 + 0.01 * (i - 1) as f64));
    }
    src.push_str("equations\n");
    for i in 1..=n {
        src.push_str(&format!("  x{i} = rho{i} * x{i}[t-1] + e{i}\n"));
    }
    src.push_str("observables\n");
    for j in 0..3 {
        let terms: Vec<String> = (1..=n)
            .filter(|i| i % 3 == j)
            .map(|i| format!("x{i}"))
            .collect();
        src.push_str(&format!("  o{j} = {}\n", terms.join(" + ")));
    }
    src.push_str(
        "priors\n  rho1 ~ beta(mean = 0.5, sd = 0.2)\n  sd(e1) ~ invgamma(shape = 3, scale = 2)\n",
    );
    let model = saddle::model::check_source(&src).expect("the 40-state model checks");
    let post = Posterior::new(&model, data, SolveOptions::default(), Regime::Rule)
        .expect("the posterior builds");
    let x0 = post.calibration();
    let reps = 200;
    let t = Instant::now();
    let mut acc = 0.0;
    for _ in 0..reps {
        acc += post.log_posterior(&x0);
    }
    let per = t.elapsed().as_secs_f64() / reps as f64;
    println!(
        "40-state model (40 variables, 40 shocks, 3 observables, 120 periods): {:.0} evaluations per second ({:.2} ms each; log posterior {:.4})",
        1.0 / per,
        per * 1e3,
        acc / reps as f64
    );
}
