//! Analysis benchmarks (release; `cargo bench --bench analysis`): moments of a 200-variable
//! system, a 10^6-period simulation of an economy the size of the demo, and (once the model
//! front end and solver are merged) a 100 x 100 determinacy sweep of the demo economy.
//! Each figure is the median of several runs, printed with the minimum and maximum.

use std::time::{Duration, Instant};

use nalgebra::DMatrix;
use saddle::analysis::moments::moments;
use saddle::analysis::simulate::{simulate, SimulationSettings};
use saddle::linalg::solve_discrete_lyapunov;
use saddle::solution::{Counts, SolvedModel, StateSpace, Status};

fn lcg(rows: usize, cols: usize, seed: u64, scale: f64) -> DMatrix<f64> {
    let mut s = seed.wrapping_mul(0x9E37_79B9_7F4A_7C15).wrapping_add(1);
    DMatrix::from_fn(rows, cols, |_, _| {
        s = s
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        scale * (((s >> 11) as f64) / (1u64 << 53) as f64 - 0.5)
    })
}

fn system(ny: usize, ns: usize, ne: usize, radius: f64, seed: u64) -> SolvedModel {
    let g = lcg(ns, ns, seed, 1.0);
    let r = g
        .clone()
        .complex_eigenvalues()
        .iter()
        .map(|z| z.norm())
        .fold(0.0, f64::max);
    let g = g * (radius / r);
    let a = lcg(ne, ne, seed + 1, 1.0);
    SolvedModel {
        title: None,
        status: Status::Determinate,
        threshold: 1.0,
        counts: Counts {
            stable: ns,
            unstable: 0,
            forward_looking: 0,
            predetermined: ns,
        },
        roots: vec![],
        variables: (0..ny).map(|i| format!("y{i}")).collect(),
        log: vec![false; ny],
        shocks: (0..ne).map(|i| format!("e{i}")).collect(),
        steady_state: vec![0.0; ny],
        covariance: &a * a.transpose() + DMatrix::identity(ne, ne),
        diagnosis: None,
        warnings: vec![],
        solution: Some(StateSpace {
            states: (0..ns).map(|i| format!("s{i}[t-1]")).collect(),
            p: lcg(ny, ns, seed + 2, 1.0),
            q: lcg(ny, ne, seed + 3, 1.0),
            g,
            h: lcg(ns, ne, seed + 4, 1.0),
        }),
    }
}

fn time<F: FnMut()>(runs: usize, mut f: F) -> (Duration, Duration, Duration) {
    let mut t: Vec<Duration> = (0..runs)
        .map(|_| {
            let s = Instant::now();
            f();
            s.elapsed()
        })
        .collect();
    t.sort();
    (t[runs / 2], t[0], t[runs - 1])
}

fn report(what: &str, (med, lo, hi): (Duration, Duration, Duration)) {
    println!(
        "{what:<60} median {:>9.2} ms  (min {:.2}, max {:.2})",
        med.as_secs_f64() * 1e3,
        lo.as_secs_f64() * 1e3,
        hi.as_secs_f64() * 1e3
    );
}

/// The 100 x 100 sweep of the demo economy over (phi_pi, phi_y), prepared once, all cores.
fn sweep_benchmark() {
    use saddle::analysis::sweep::{sweep_model, SweepAxis};
    use saddle::solution::{PreparedModel, SolveOptions};
    let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("models/harbour.saddle");
    let text = std::fs::read_to_string(path).expect("models/harbour.saddle");
    let model = saddle::model::check::check_source(&text).expect("the demo model checks");
    let axes = vec![
        SweepAxis {
            name: "phi_pi".into(),
            values: (0..100).map(|i| i as f64 * 0.03).collect(),
        },
        SweepAxis {
            name: "phi_y".into(),
            values: (0..100).map(|i| i as f64 * 0.01).collect(),
        },
    ];
    let mut counts = Vec::new();
    let t = time(5, || {
        let prepared = PreparedModel::new(&model).expect("prepares");
        let r = sweep_model(
            &model,
            &prepared,
            &SolveOptions::default(),
            &axes,
            &|_, _| {},
        )
        .expect("sweeps");
        counts = r.status_counts();
    });
    report(
        &format!(
            "sweep: harbour economy, 100 x 100 grid, {} threads",
            rayon::current_num_threads()
        ),
        t,
    );
    println!("  statuses: {counts:?}");
}

fn main() {
    sweep_benchmark();
    for &(ny, ns, ne) in &[
        (200usize, 200usize, 5usize),
        (200, 100, 5),
        (200, 50, 10),
        (200, 200, 1),
    ] {
        let sm = system(ny, ns, ne, 0.95, 7);
        let t = time(7, || {
            let m = moments(&sm, 5, &[1, 4, 8, 40]).unwrap();
            assert!(m.lyapunov_residual < 1e-12);
        });
        report(
            &format!("moments: {ny} variables, {ns} states, {ne} shocks, 5 lags, 4 horizons"),
            t,
        );
    }
    let sm = system(200, 200, 5, 0.95, 7);
    let ss = sm.solution.as_ref().unwrap();
    let w = &ss.h * &sm.covariance * ss.h.transpose();
    report(
        "lyapunov alone: 200 states (Schur route, residual checked)",
        time(7, || {
            solve_discrete_lyapunov(&ss.g, &w).unwrap();
        }),
    );

    // An economy of the demo's size: 4 variables, 1 state, 2 correlated innovations.
    let demo = system(4, 1, 2, 0.6, 3);
    let settings = SimulationSettings {
        seed: 1,
        periods: 1_000_000,
        burn_in: 100,
        levels: false,
    };
    report(
        "simulate: 10^6 periods, 4 variables, 1 state, 2 shocks",
        time(5, || {
            simulate(&demo, &settings).unwrap();
        }),
    );
    let sim = simulate(&demo, &settings).unwrap();
    report(
        "  + wide CSV of those 10^6 periods",
        time(3, || {
            saddle::output::simulate::to_csv_wide(&sim);
        }),
    );
}
