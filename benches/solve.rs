//! Benchmark of the solve pipeline (run: `cargo bench --bench solve`).
//!
//! 1. A generated 500-equation model (sparse; backward, forward, mixed and static blocks; leads
//!    of two, lags of two, lagged innovations; nonlinear static equations in logs): time of each
//!    phase, with static variables eliminated (the default) and kept.
//! 2. A parameter sweep of the three-equation economy: 10,000 solves on 2 threads.
//!
//! The generated model is also written to `target/bench-solve-500.saddle` so the whole process
//! can be timed with `saddle solve` (see docs/performance.md).

use std::time::{Duration, Instant};

use nalgebra::DMatrix;
use rayon::prelude::*;

use saddle::canonical::StaticTreatment;
use saddle::model::{
    BinaryOp, Endogenous, Equation, Exogenous, Expr, Function, Model, ModelOptions, Parameter,
};
use saddle::solution::{PreparedModel, SolveOptions, Status};

fn v(i: usize, o: i32) -> Expr {
    Expr::Variable {
        index: i,
        offset: o,
    }
}
fn e(i: usize, o: i32) -> Expr {
    Expr::Innovation {
        index: i,
        offset: o,
    }
}
fn n(x: f64) -> Expr {
    Expr::Number(x)
}
fn add(a: Expr, b: Expr) -> Expr {
    Expr::binary(BinaryOp::Add, a, b)
}
fn mul(a: Expr, b: Expr) -> Expr {
    Expr::binary(BinaryOp::Mul, a, b)
}
fn pow(a: Expr, b: Expr) -> Expr {
    Expr::binary(BinaryOp::Pow, a, b)
}
fn div(a: Expr, b: Expr) -> Expr {
    Expr::binary(BinaryOp::Div, a, b)
}
fn call(f: Function, a: Expr) -> Expr {
    Expr::Call(f, Box::new(a))
}

/// Model text for an expression (fully parenthesized), with variable and shock names.
fn print(e: &Expr, vars: &[Endogenous], shocks: &[Exogenous]) -> String {
    let dated = |name: &str, o: i32| match o {
        0 => name.to_string(),
        k if k > 0 => format!("{name}[t+{k}]"),
        k => format!("{name}[t-{}]", -k),
    };
    match e {
        Expr::Number(x) => format!("{x}"),
        Expr::Variable { index, offset } => dated(&vars[*index].name, *offset),
        Expr::Innovation { index, offset } => dated(&shocks[*index].name, *offset),
        Expr::Binary(op, a, b) => format!(
            "({} {} {})",
            print(a, vars, shocks),
            op.symbol(),
            print(b, vars, shocks)
        ),
        Expr::Call(f, a) => format!("{}({})", f.name(), print(a, vars, shocks)),
        Expr::Neg(a) => format!("(-{})", print(a, vars, shocks)),
        other => format!("{other:?}"),
    }
}

/// The generated model (see the module doc) and its text.
fn generated(nb: usize, nf: usize, nm: usize, ns: usize, ne: usize) -> (Model, String) {
    let a0 = 0;
    let f0 = nb;
    let m0 = nb + nf;
    let s0 = nb + nf + nm;
    let total = s0 + ns;
    let mut vars = Vec::new();
    for i in 0..total {
        let (name, log) = if i < f0 {
            (format!("a{i}"), false)
        } else if i < m0 {
            (format!("f{}", i - f0), false)
        } else if i < s0 {
            (format!("m{}", i - m0), false)
        } else {
            let k = i - s0;
            (format!("s{k}"), k.is_multiple_of(3))
        };
        vars.push(Endogenous {
            name,
            label: None,
            log,
            max_lead: 0,
            max_lag: 0,
            predetermined: false,
        });
    }
    let mut shocks: Vec<Exogenous> = (0..ne)
        .map(|i| Exogenous {
            name: format!("e{i}"),
            label: None,
            max_lag: 0,
        })
        .collect();
    let mut eqs: Vec<(Expr, Expr)> = Vec::new();
    for i in 0..nb {
        // a_i = rho a_i[t-1] (+ 0.1 a_i[t-2]) + 0.01 e (+ 0.002 e[t-1])
        let rho = 0.5 + 0.4 * (i % 5) as f64 / 5.0;
        let mut rhs = add(mul(n(rho), v(a0 + i, -1)), mul(n(0.01), e(i % ne, 0)));
        if i % 8 == 0 {
            rhs = add(rhs, mul(n(0.1), v(a0 + i, -2)));
        }
        if i % 15 == 0 {
            rhs = add(rhs, mul(n(0.002), e(i % ne, -1)));
        }
        eqs.push((v(a0 + i, 0), rhs));
    }
    for i in 0..nf {
        // f_i = 0.6 f_i[t+1] + 0.2 f_(i+1)[t+1] (+ 0.1 f_i[t+2]) + 0.5 a_i + 0.1 m + 0.05 ln(s/2)
        let mut rhs = add(
            mul(n(0.6), v(f0 + i, 1)),
            mul(n(0.2), v(f0 + (i + 1) % nf, 1)),
        );
        if i % 7 == 0 {
            rhs = add(rhs, mul(n(0.1), v(f0 + i, 2)));
        }
        rhs = add(rhs, mul(n(0.5), v(a0 + i % nb, 0)));
        rhs = add(rhs, mul(n(0.1), v(m0 + i % nm, 0)));
        let sk = s0 + 3 * (i % (ns / 3));
        rhs = add(rhs, mul(n(0.05), call(Function::Ln, div(v(sk, 0), n(2.0)))));
        eqs.push((v(f0 + i, 0), rhs));
    }
    for i in 0..nm {
        // m_i = 0.4 m_i[t-1] + 0.4 m_i[t+1] + 0.1 a_i + 0.05 f_i
        let rhs = add(
            add(mul(n(0.4), v(m0 + i, -1)), mul(n(0.4), v(m0 + i, 1))),
            add(
                mul(n(0.1), v(a0 + i % nb, 0)),
                mul(n(0.05), v(f0 + i % nf, 0)),
            ),
        );
        eqs.push((v(m0 + i, 0), rhs));
    }
    for k in 0..ns {
        let rhs = match k % 3 {
            // log variable, steady state 2: 2 exp(0.3 a) (1 + 0.1 f)^0.5
            0 => mul(
                mul(n(2.0), call(Function::Exp, mul(n(0.3), v(a0 + k % nb, 0)))),
                pow(add(n(1.0), mul(n(0.1), v(f0 + k % nf, 0))), n(0.5)),
            ),
            // 0.5 s_(k-1) + m + 0.2 f: steady state 1
            1 => add(
                add(mul(n(0.5), v(s0 + k - 1, 0)), v(m0 + k % nm, 0)),
                mul(n(0.2), v(f0 + k % nf, 0)),
            ),
            // ln(s_(k-2)) + a a': steady state ln 2
            _ => add(
                call(Function::Ln, v(s0 + k - 2, 0)),
                mul(v(a0 + k % nb, 0), v(a0 + (k + 1) % nb, 0)),
            ),
        };
        eqs.push((v(s0 + k, 0), rhs));
    }
    // Leads and lags, as the front end records them.
    saddle::model::record_leads_and_lags(&mut vars, &mut shocks, &eqs);
    let mut text =
        String::from("title \"Generated archipelago: 500 islands (benchmark)\"\n\nendogenous\n");
    for x in &vars {
        text.push_str(&format!(
            "  {}{}\n",
            if x.log { "log " } else { "" },
            x.name
        ));
    }
    text.push_str("\nexogenous\n");
    for s in &shocks {
        text.push_str(&format!("  {}\n", s.name));
    }
    text.push_str("\nequations\n");
    for (l, r) in &eqs {
        text.push_str(&format!(
            "  {} = {}\n",
            print(l, &vars, &shocks),
            print(r, &vars, &shocks)
        ));
    }
    let model = Model {
        title: Some("generated".into()),
        endogenous: vars,
        exogenous: shocks,
        parameters: Vec::<Parameter>::new(),
        parameter_order: Vec::new(),
        equations: eqs
            .into_iter()
            .map(|(lhs, rhs)| Equation {
                label: None,
                lhs,
                rhs,
            })
            .collect(),
        covariance_items: Vec::new(),
        covariance: DMatrix::identity(ne, ne),
        sd_given: vec![true; ne],
        steady: Vec::new(),
        options: ModelOptions::default(),
        observables: Vec::new(),
        measurement_items: Vec::new(),
        measurement_covariance: DMatrix::zeros(0, 0),
        priors: Vec::new(),
        objective: None,
    };
    (model, text)
}

/// The three-equation economy with parameters beta, sigma, kappa, phi_pi, phi_y, rho.
fn harbour(values: [f64; 6]) -> Model {
    let p = Expr::Parameter;
    let sub = |a, b| Expr::binary(BinaryOp::Sub, a, b);
    let names = ["beta", "sigma", "kappa", "phi_pi", "phi_y", "rho"];
    let vars = ["gap", "infl", "rate", "drift"];
    let eqs = vec![
        (v(0, 0), sub(v(0, 1), div(sub(v(2, 0), v(1, 1)), p(1)))),
        (
            v(1, 0),
            add(add(mul(p(0), v(1, 1)), mul(p(2), v(0, 0))), e(1, 0)),
        ),
        (
            v(2, 0),
            add(add(mul(p(3), v(1, 0)), mul(p(4), v(0, 0))), v(3, 0)),
        ),
        (v(3, 0), add(mul(p(5), v(3, -1)), e(0, 0))),
    ];
    Model {
        title: Some("harbour".into()),
        endogenous: vars
            .iter()
            .enumerate()
            .map(|(i, name)| Endogenous {
                name: name.to_string(),
                label: None,
                log: false,
                max_lead: u32::from(i < 2),
                max_lag: u32::from(i == 3),
                predetermined: false,
            })
            .collect(),
        exogenous: ["e_rate", "e_cost"]
            .iter()
            .map(|name| Exogenous {
                name: name.to_string(),
                label: None,
                max_lag: 0,
            })
            .collect(),
        parameters: names
            .iter()
            .zip(values)
            .map(|(name, value)| Parameter {
                name: name.to_string(),
                label: None,
                expr: Expr::Number(value),
                value,
            })
            .collect(),
        parameter_order: (0..6).collect(),
        equations: eqs
            .into_iter()
            .map(|(lhs, rhs)| Equation {
                label: None,
                lhs,
                rhs,
            })
            .collect(),
        covariance_items: Vec::new(),
        covariance: DMatrix::from_diagonal(&nalgebra::DVector::from_vec(vec![0.0625, 0.01])),
        sd_given: vec![true, true],
        steady: Vec::new(),
        options: ModelOptions::default(),
        observables: Vec::new(),
        measurement_items: Vec::new(),
        measurement_covariance: DMatrix::zeros(0, 0),
        priors: Vec::new(),
        objective: None,
    }
}

fn ms(d: Duration) -> f64 {
    d.as_secs_f64() * 1e3
}

fn main() {
    let (model, text) = generated(75, 75, 50, 300, 40);
    let path =
        std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("target/bench-solve-500.saddle");
    let _ = std::fs::write(&path, &text);
    println!(
        "== generated model: {} equations (written to {})",
        model.equations.len(),
        path.display()
    );
    for treatment in [StaticTreatment::Eliminate, StaticTreatment::Keep] {
        let mut best: Option<(Duration, saddle::solution::Timings, usize, f64)> = None;
        for _ in 0..3 {
            let t0 = Instant::now();
            let prepared = PreparedModel::new(&model)
                .expect("prepare")
                .with_static_treatment(treatment);
            let d = prepared
                .solve_detailed(&model, &SolveOptions::default())
                .expect("solve");
            let wall = t0.elapsed();
            assert_eq!(
                d.solved.status,
                Status::Determinate,
                "{:?}",
                d.solved.diagnosis
            );
            let resid = d.max_residual.unwrap_or(f64::NAN);
            if best.as_ref().is_none_or(|b| wall < b.0) {
                best = Some((wall, d.timings, d.pencil.dim(), resid));
            }
        }
        let (wall, t, dim, resid) = best.unwrap();
        println!(
            "statics {:<9} pencil dim {dim:>4}  wall {:>8.1} ms  residual {resid:.1e}",
            format!("{treatment:?}"),
            ms(wall)
        );
        for line in t.report().lines() {
            println!("    {line}");
        }
    }

    println!("== sweep: three-equation economy, 10,000 solves, phi_pi in [0.5, 3]");
    let base = harbour([0.99, 1.5, 0.1717, 1.6, 0.2, 0.6]);
    let prepared = PreparedModel::new(&base).expect("prepare");
    let grid: Vec<f64> = (0..10_000)
        .map(|i| 0.5 + 2.5 * i as f64 / 9_999.0)
        .collect();
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(2)
        .build()
        .expect("pool");
    for threads in [1usize, 2] {
        let t0 = Instant::now();
        let run = |x: &f64| {
            let mut m = base.clone();
            m.parameters[3].value = *x;
            let (s, _) = prepared.solve(&m, &SolveOptions::default()).expect("solve");
            usize::from(s.status == Status::Determinate)
        };
        let determinate: usize = if threads == 1 {
            grid.iter().map(run).sum()
        } else {
            pool.install(|| grid.par_iter().map(run).sum())
        };
        let wall = t0.elapsed();
        println!(
            "threads {threads}: {:>8.1} ms total, {:>6.1} us per point ({determinate} determinate)",
            ms(wall),
            wall.as_secs_f64() * 1e6 / grid.len() as f64
        );
    }
}
