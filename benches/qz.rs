//! QZ benchmark (harness = false): `cargo bench --bench qz [-- SIZES]`, e.g. `-- 50,100,200`.
//!
//! For each n it builds a reproducible macro-like real pencil (A standard normal; B standard
//! normal with n/10 rows zeroed, as static equations make it singular) and a complex pencil of
//! the same size, and prints the best-of-repeats wall time of the decomposition
//! (`GeneralizedSchur::new` / `new_complex`), of the reordering by |alpha| < |beta| on a copy, and
//! the backward error max(||Q S Z^H - A||_F/||A||_F, ||Q T Z^H - B||_F/||B||_F) after reordering.

use nalgebra::DMatrix;
use saddle::qz::{GeneralizedSchur, C64};
use std::time::{Duration, Instant};

/// Wall-time budget per measured quantity: at least 3 repeats, at most 50.
const BUDGET: Duration = Duration::from_millis(1500);

/// SplitMix64 + Box-Muller normals (Steele, Lea and Flood 2014; Box and Muller 1958).
struct Rng(u64);
impl Rng {
    fn next(&mut self) -> f64 {
        self.0 = self.0.wrapping_add(0x9E3779B97F4A7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58476D1CE4E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D049BB133111EB);
        (((z ^ (z >> 31)) >> 11) as f64 + 0.5) / (1u64 << 53) as f64
    }
    fn normal(&mut self) -> f64 {
        let (u, v) = (self.next(), self.next());
        (-2.0 * u.ln()).sqrt() * (2.0 * std::f64::consts::PI * v).cos()
    }
}

fn best_ms<T>(mut f: impl FnMut() -> T) -> (f64, T) {
    let mut best = f64::INFINITY;
    let mut spent = Duration::ZERO;
    let mut reps = 0;
    let mut out = f();
    while reps < 3 || (spent < BUDGET && reps < 50) {
        let t = Instant::now();
        out = f();
        let d = t.elapsed();
        spent += d;
        reps += 1;
        best = best.min(d.as_secs_f64() * 1e3);
    }
    (best, out)
}

fn main() {
    let sizes: Vec<usize> = std::env::args()
        .skip(1)
        .find(|a| !a.starts_with('-'))
        .map(|s| s.split(',').filter_map(|x| x.trim().parse().ok()).collect())
        .unwrap_or_else(|| vec![25, 50, 100, 200, 400]);
    println!(
        "{:>5} {:>8} {:>12} {:>12} {:>12} {:>14} {:>12}",
        "n", "input", "decomp ms", "reorder ms", "total ms", "backward err", "selected"
    );
    let sel = |al: C64, be: C64| al.norm() < be.norm();
    for &n in &sizes {
        let mut rng = Rng(12345 + n as u64);
        let a = DMatrix::from_fn(n, n, |_, _| rng.normal());
        let mut b = DMatrix::from_fn(n, n, |_, _| rng.normal());
        for k in 0..(n / 10).max(1) {
            let i = (k * 7919) % n;
            b.row_mut(i).fill(0.0);
        }
        let ac = a.map(|x| C64::new(x, 0.0));
        let bc = b.map(|x| C64::new(x, 0.0));
        let cplx_a = DMatrix::from_fn(n, n, |_, _| C64::new(rng.normal(), rng.normal()));
        let cplx_b = DMatrix::from_fn(n, n, |_, _| C64::new(rng.normal(), rng.normal()));
        for (label, is_real) in [("real", true), ("complex", false)] {
            let decompose = || {
                if is_real {
                    GeneralizedSchur::new(a.clone(), b.clone())
                } else {
                    GeneralizedSchur::new_complex(cplx_a.clone(), cplx_b.clone())
                }
            };
            let (t_dec, g) = best_ms(decompose);
            let g = match g {
                Ok(g) => g,
                Err(e) => {
                    println!("{n:>5} {label:>8} failed: {e}");
                    continue;
                }
            };
            let (t_ord, r) = best_ms(|| {
                let mut h = g.clone();
                let k = h.reorder(sel);
                (h, k)
            });
            let (h, k) = r;
            let (t_tot, _) = best_ms(|| {
                let mut h = decompose().ok()?;
                h.reorder(sel).ok()
            });
            let be = if is_real {
                h.backward_error(&ac, &bc).unwrap_or(f64::NAN)
            } else {
                h.backward_error(&cplx_a, &cplx_b).unwrap_or(f64::NAN)
            };
            let k = k.map(|k| k.to_string()).unwrap_or_else(|e| e.to_string());
            println!(
                "{n:>5} {label:>8} {t_dec:>12.3} {t_ord:>12.3} {t_tot:>12.3} {be:>14.2e} {k:>12}"
            );
        }
    }
}
