//! Timing of the exact Kalman log-likelihood on the files written by
//! `../shared/bench/compare_kalman.py` (its header gives the contract): for each file
//! (line 1: n p N; then T, Q (n rows each), Z, H (p rows each), N rows of data) print one JSON
//! line `{"file": ..., "n": ..., "best_ms": ..., "loglik": ...}`. The model is
//! alpha_t = T alpha_{t-1} + e_t, Var e = Q, y_t = Z alpha_t + u_t, Var u = H, stationary start;
//! every timed call computes the stationary covariance (Lyapunov) itself.
//!
//!     cargo run --release --example kalman_timing -- FILE...

use std::time::{Duration, Instant};

use nalgebra::{DMatrix, DVector};
use saddle::kalman::{loglik, KalmanParams, StateSpaceModel};

fn read(path: &str) -> Result<(StateSpaceModel, DMatrix<f64>), String> {
    let text = std::fs::read_to_string(path).map_err(|e| format!("{path}: {e}"))?;
    let mut lines = text.lines();
    let head: Vec<usize> = lines
        .next()
        .ok_or("empty file")?
        .split_whitespace()
        .map(|s| s.parse().map_err(|e| format!("{path}: header: {e}")))
        .collect::<Result<_, _>>()?;
    let [n, p, big_n] = head[..] else {
        return Err(format!("{path}: the first line must be `n p N`"));
    };
    let mut block = |rows: usize, cols: usize| -> Result<DMatrix<f64>, String> {
        let mut m = DMatrix::zeros(rows, cols);
        for i in 0..rows {
            let line = lines.next().ok_or(format!("{path}: file ends early"))?;
            let vals: Vec<f64> = line
                .split_whitespace()
                .map(|s| s.parse().map_err(|e| format!("{path}: {e}")))
                .collect::<Result<_, _>>()?;
            if vals.len() != cols {
                return Err(format!(
                    "{path}: a row has {} values, expected {cols}",
                    vals.len()
                ));
            }
            for (j, v) in vals.into_iter().enumerate() {
                m[(i, j)] = v;
            }
        }
        Ok(m)
    };
    let t = block(n, n)?;
    let q = block(n, n)?;
    let z = block(p, n)?;
    let h = block(p, p)?;
    let y = block(big_n, p)?;
    Ok((
        StateSpaceModel {
            t,
            r: DMatrix::identity(n, n),
            q,
            d: DVector::zeros(p),
            z,
            hm: h,
        },
        y,
    ))
}

fn main() {
    let params = KalmanParams::default();
    let mut failed = false;
    for path in std::env::args().skip(1) {
        let (model, y) = match read(&path) {
            Ok(x) => x,
            Err(e) => {
                eprintln!("{e}");
                failed = true;
                continue;
            }
        };
        let ll = match loglik(&model, &y, &params) {
            Ok(v) => v,
            Err(e) => {
                eprintln!("{path}: {e}");
                failed = true;
                continue;
            }
        };
        // Best of repeats within a 2-second budget (at least 5 calls).
        let mut best = Duration::MAX;
        let end = Instant::now() + Duration::from_secs(2);
        let mut calls = 0;
        while calls < 5 || Instant::now() < end {
            let t0 = Instant::now();
            let v = loglik(&model, &y, &params);
            best = best.min(t0.elapsed());
            std::hint::black_box(v.ok());
            calls += 1;
        }
        println!(
            "{{\"file\": {:?}, \"n\": {}, \"best_ms\": {}, \"loglik\": {:?}}}",
            path,
            model.n_states(),
            best.as_secs_f64() * 1e3,
            ll
        );
    }
    if failed {
        std::process::exit(1);
    }
}
