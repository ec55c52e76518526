//! QZ timing contract for `../shared/bench/compare_qz.py`.
//!
//! Usage: `cargo run --release --example qz_timing -- FILE...`. Each file holds a pencil: first
//! line n, then n lines of A, then n lines of B (whitespace-separated numbers). For each file it
//! runs the complex QZ of the real pencil with reordering by |alpha| < |beta|, repeated within a
//! small time budget (at least 3 runs, at most 100, about 2 s), and prints one JSON line
//! `{"file": ..., "n": ..., "best_ms": ..., "backward_error": ...}` where the backward error is
//! max(||Q S Z^H - A||_F / ||A||_F, ||Q T Z^H - B||_F / ||B||_F) of the last run.

use nalgebra::DMatrix;
use saddle::qz::{GeneralizedSchur, C64};
use std::time::{Duration, Instant};

/// Time budget per file: enough repetitions for a stable best time, short enough for n = 400.
const BUDGET: Duration = Duration::from_secs(2);

fn read_pencil(path: &str) -> Result<(DMatrix<f64>, DMatrix<f64>), String> {
    let text = std::fs::read_to_string(path).map_err(|e| format!("{path}: {e}"))?;
    let mut nums = text.split_whitespace();
    let n: usize = nums
        .next()
        .ok_or_else(|| format!("{path}: empty file"))?
        .parse()
        .map_err(|e| format!("{path}: bad dimension: {e}"))?;
    if n > 20_000 {
        return Err(format!("{path}: dimension {n} too large"));
    }
    let mut read = |label: &str| -> Result<DMatrix<f64>, String> {
        let mut v = Vec::with_capacity(n * n);
        for _ in 0..n * n {
            let x: f64 = nums
                .next()
                .ok_or_else(|| format!("{path}: {label} has too few entries"))?
                .parse()
                .map_err(|e| format!("{path}: bad number in {label}: {e}"))?;
            v.push(x);
        }
        Ok(DMatrix::from_row_slice(n, n, &v))
    };
    let a = read("A")?;
    let b = read("B")?;
    Ok((a, b))
}

fn json_string(s: &str) -> String {
    serde_json::to_string(s).unwrap_or_else(|_| "\"?\"".into())
}

fn main() {
    let files: Vec<String> = std::env::args().skip(1).collect();
    if files.is_empty() {
        eprintln!("usage: qz_timing FILE...");
        std::process::exit(2);
    }
    let mut failed = false;
    for path in &files {
        let (a, b) = match read_pencil(path) {
            Ok(p) => p,
            Err(e) => {
                eprintln!("{e}");
                failed = true;
                continue;
            }
        };
        let n = a.nrows();
        let run = || -> Result<GeneralizedSchur, String> {
            let mut g = GeneralizedSchur::new(a.clone(), b.clone()).map_err(|e| e.to_string())?;
            g.reorder(|al: C64, be: C64| al.norm() < be.norm())
                .map_err(|e| e.to_string())?;
            Ok(g)
        };
        let mut best = f64::INFINITY;
        let mut spent = Duration::ZERO;
        let mut reps = 0;
        let mut last = None;
        while reps < 3 || (spent < BUDGET && reps < 100) {
            let t0 = Instant::now();
            let r = run();
            let d = t0.elapsed();
            spent += d;
            reps += 1;
            best = best.min(d.as_secs_f64() * 1e3);
            match r {
                Ok(g) => last = Some(g),
                Err(e) => {
                    eprintln!("{path}: {e}");
                    failed = true;
                    break;
                }
            }
        }
        if let Some(g) = last {
            let be = g
                .backward_error(&a.map(|x| C64::new(x, 0.0)), &b.map(|x| C64::new(x, 0.0)))
                .unwrap_or(f64::NAN);
            println!(
                "{{\"file\": {}, \"n\": {}, \"best_ms\": {:.3}, \"backward_error\": {:.3e}}}",
                json_string(path),
                n,
                best,
                be
            );
        }
    }
    if failed {
        std::process::exit(1);
    }
}
