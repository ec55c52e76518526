//! Riccati timing contract for `../shared/bench/compare_dare.py`.
//!
//! Usage: `cargo run --release --example dare_timing -- FILE...`. Each file holds a discounted
//! regulator problem: line 1 `n m beta`, then A (n rows of n), B (n rows of m), Q (n rows of n),
//! R (m rows of m), S (n rows of m), whitespace-separated. For each file it solves
//! `X = Q + beta A'XA - (beta A'XB + S)(R + beta B'XB)^{-1}(beta B'XA + S')` with
//! [`saddle::riccati::solve_dare`] (default parameters: balancing, closed-loop check and residual
//! included in the time), repeated within a time budget (at least 3 runs, at most 100, about 2 s),
//! writes X to `FILE.x` (n rows of n numbers) and prints one JSON line
//! `{"file": ..., "n": ..., "best_ms": ..., "x": "FILE.x", "residual": ...}`.

use nalgebra::DMatrix;
use saddle::riccati::{solve_dare, DareParams};
use std::io::Write;
use std::time::{Duration, Instant};

/// Time budget per file.
const BUDGET: Duration = Duration::from_secs(2);

struct Problem {
    a: DMatrix<f64>,
    b: DMatrix<f64>,
    q: DMatrix<f64>,
    r: DMatrix<f64>,
    s: DMatrix<f64>,
    beta: f64,
}

fn read_problem(path: &str) -> Result<Problem, String> {
    let text = std::fs::read_to_string(path).map_err(|e| format!("{path}: {e}"))?;
    let mut nums = text.split_whitespace();
    let mut next = |what: &str| -> Result<f64, String> {
        nums.next()
            .ok_or_else(|| format!("{path}: too few numbers ({what})"))?
            .parse::<f64>()
            .map_err(|e| format!("{path}: bad number in {what}: {e}"))
    };
    let n = next("n")?;
    let m = next("m")?;
    let beta = next("beta")?;
    if !((1.0..=5000.0).contains(&n)
        && (1.0..=n).contains(&m)
        && n.fract() == 0.0
        && m.fract() == 0.0)
    {
        return Err(format!("{path}: bad sizes n = {n}, m = {m}"));
    }
    let (n, m) = (n as usize, m as usize);
    let mut read = |r: usize, c: usize, what: &str| -> Result<DMatrix<f64>, String> {
        let mut v = Vec::with_capacity(r * c);
        for _ in 0..r * c {
            v.push(next(what)?);
        }
        Ok(DMatrix::from_row_slice(r, c, &v))
    };
    Ok(Problem {
        a: read(n, n, "A")?,
        b: read(n, m, "B")?,
        q: read(n, n, "Q")?,
        r: read(m, m, "R")?,
        s: read(n, m, "S")?,
        beta,
    })
}

fn json_string(s: &str) -> String {
    serde_json::to_string(s).unwrap_or_else(|_| "\"?\"".into())
}

fn run(path: &str) -> Result<String, String> {
    let p = read_problem(path)?;
    let params = DareParams::default();
    let mut best = Duration::MAX;
    let mut runs = 0;
    let start = Instant::now();
    let mut last = None;
    while runs < 3 || (start.elapsed() < BUDGET && runs < 100) {
        let t0 = Instant::now();
        let sol = solve_dare(&p.a, &p.b, &p.q, &p.r, Some(&p.s), p.beta, &params)
            .map_err(|e| format!("{path}: {e}"))?;
        best = best.min(t0.elapsed());
        last = Some(sol);
        runs += 1;
    }
    let sol = last.ok_or_else(|| format!("{path}: no run"))?;
    let xpath = format!("{path}.x");
    let mut f = std::fs::File::create(&xpath).map_err(|e| format!("{xpath}: {e}"))?;
    for i in 0..sol.x.nrows() {
        let row: Vec<String> = (0..sol.x.ncols())
            .map(|j| format!("{:e}", sol.x[(i, j)]))
            .collect();
        writeln!(f, "{}", row.join(" ")).map_err(|e| format!("{xpath}: {e}"))?;
    }
    Ok(format!(
        "{{\"file\": {}, \"n\": {}, \"best_ms\": {}, \"x\": {}, \"residual\": {:e}, \"runs\": {runs}}}",
        json_string(path),
        p.a.nrows(),
        best.as_secs_f64() * 1e3,
        json_string(&xpath),
        sol.residual
    ))
}

fn main() {
    let mut failed = false;
    for path in std::env::args().skip(1) {
        match run(&path) {
            Ok(line) => println!("{line}"),
            Err(e) => {
                eprintln!("{e}");
                failed = true;
            }
        }
    }
    if failed {
        std::process::exit(1);
    }
}
