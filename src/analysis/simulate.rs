//! Simulated paths of the solved model
//!
//! ```text
//!     s_{-1} = 0,   e_t = L z_t  (z_t iid N(0, I), Sigma = L L'),
//!     y_t - ybar = P s_{t-1} + Q e_t,   s_t = G s_{t-1} + H e_t,   t = 0, 1, ..., burn_in + periods - 1
//! ```
//!
//! The first `burn_in` periods are dropped. Levels are ybar + dev, or ybar * exp(dev) for `log`
//! variables (whose deviations are log deviations).
//!
//! Reproducibility on every platform: the generator is ChaCha20 (Bernstein 2008, "ChaCha, a
//! variant of Salsa20"; the `rand_chacha` stream is value-stable) keyed from `--seed` by SplitMix64
//! (Steele, Lea and Flood 2014, "Fast splittable pseudorandom number generators", OOPSLA), and the
//! normal draws use the Marsaglia polar method (Marsaglia and Bray 1964, "A convenient method for
//! generating normal variables", SIAM Review 6) with a logarithm of our own built only from
//! IEEE-754 correctly rounded operations (+, -, *, /), so the same seed gives the same bits
//! wherever Rust runs, whatever the platform's `libm`.

use nalgebra::DMatrix;
use rand_chacha::ChaCha20Rng;
use rand_core::{RngCore, SeedableRng};
use thiserror::Error;

use super::moments::{check_shapes, covariance_factor, CovarianceError, MomentsError, Shapes};
use crate::solution::{SolvedModel, Status};

/// Largest number of stored values (periods x variables): 5e7 doubles are 400 MB.
pub const MAX_STORED_VALUES: usize = 50_000_000;
/// Largest burn-in (each period costs time even when it is not stored).
pub const MAX_BURN_IN: usize = 100_000_000;

/// What to simulate.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct SimulationSettings {
    pub seed: u64,
    /// Periods kept after the burn-in.
    pub periods: usize,
    /// Periods simulated and dropped first.
    pub burn_in: usize,
    /// Report levels instead of deviations from the steady state.
    pub levels: bool,
}

/// Simulated paths.
#[derive(Debug, Clone, PartialEq)]
pub struct Simulation {
    pub variables: Vec<String>,
    pub periods: usize,
    /// periods x variables; row t is kept period t (0-based; the CLI prints 1-based periods).
    pub paths: DMatrix<f64>,
    pub levels: bool,
    pub seed: u64,
    pub burn_in: usize,
}

/// Why a simulation was not produced.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum SimulateError {
    #[error("the model has no unique stable solution (status {status}); simulation needs one")]
    NotDeterminate { status: &'static str },
    #[error("the solution is inconsistent: the matrices have inconsistent sizes: {0}")]
    Shape(Shapes),
    #[error("the solution is inconsistent: the solution matrices have a non-finite entry")]
    NonFiniteSolution,
    #[error("the solution is inconsistent: {variables} variables, but {steady_state} steady-state values and {log} log flags")]
    SteadyStateLength {
        variables: usize,
        steady_state: usize,
        log: usize,
    },
    #[error(transparent)]
    Covariance(#[from] CovarianceError),
    #[error("{periods} periods of {variables} variables is more than {MAX_STORED_VALUES} values; ask for fewer periods")]
    TooLarge { periods: usize, variables: usize },
    #[error("a burn-in of {0} periods is more than the {MAX_BURN_IN} allowed")]
    BurnInTooLong(usize),
    #[error("the simulated path of `{variable}` is not finite at period {period} (the solution has a unit or explosive root, or the shocks are too large)")]
    NonFinite { variable: String, period: usize },
}

/// The 32-byte ChaCha20 key derived from a 64-bit seed by four SplitMix64 steps (little-endian).
pub fn chacha_key(seed: u64) -> [u8; 32] {
    let mut state = seed;
    let mut key = [0u8; 32];
    for chunk in key.chunks_exact_mut(8) {
        state = state.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = state;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^= z >> 31;
        chunk.copy_from_slice(&z.to_le_bytes());
    }
    key
}

/// ln 2 split so that k * LN2_HI is exact for |k| < 2^11 (the classic Cody-Waite split; the
/// bit patterns are those of fdlibm's e_log.c, 6.93147180369123816490e-01 and
/// 1.90821492927058770002e-10; common practice).
const LN2_HI: f64 = f64::from_bits(0x3fe6_2e42_fee0_0000);
const LN2_LO: f64 = f64::from_bits(0x3dea_39ef_3579_3c76);

/// Natural logarithm of a positive finite `x` from correctly rounded operations only, hence
/// bit-identical on every IEEE-754 platform: x = 2^k m with m in [sqrt(1/2), sqrt(2)), and
/// ln m = 2 atanh(f) = 2 (f + f^3/3 + ... + f^23/23), f = (m-1)/(m+1), |f| < 0.1716 (the series
/// tail after f^23 is below 1e-19 relative). Error about 1 ulp. Returns NaN for x <= 0 or NaN,
/// infinity for infinity.
pub fn portable_ln(x: f64) -> f64 {
    if x.is_nan() || x <= 0.0 {
        return f64::NAN;
    }
    if x.is_infinite() {
        return f64::INFINITY;
    }
    let mut x = x;
    let mut k: i64 = 0;
    if x < f64::MIN_POSITIVE {
        x *= 18_014_398_509_481_984.0; // 2^54: subnormals become normal
        k -= 54;
    }
    let bits = x.to_bits();
    k += ((bits >> 52) & 0x7ff) as i64 - 1023;
    let mut m = f64::from_bits((bits & 0x000f_ffff_ffff_ffff) | 0x3ff0_0000_0000_0000);
    if m > std::f64::consts::SQRT_2 {
        m *= 0.5;
        k += 1;
    }
    let f = (m - 1.0) / (m + 1.0);
    let s = f * f;
    // Horner in s for 1 + s/3 + s^2/5 + ... + s^11/23.
    let mut poly = 1.0 / 23.0;
    let mut d = 21.0;
    while d >= 1.0 {
        poly = poly * s + 1.0 / d;
        d -= 2.0;
    }
    let kf = k as f64;
    kf * LN2_HI + (kf * LN2_LO + 2.0 * f * poly)
}

/// e^x from correctly rounded operations only (bit-identical on every IEEE-754 platform):
/// x = k ln 2 + r with |r| <= ln(2)/2 (Cody-Waite reduction), e^r by its Taylor series to r^14
/// (tail below 1e-18 relative), then scaled by 2^k. Overflow gives infinity, underflow 0.
pub fn portable_exp(x: f64) -> f64 {
    if x.is_nan() {
        return f64::NAN;
    }
    if x > 709.782_712_893_384 {
        return f64::INFINITY;
    }
    if x < -745.133_219_101_941_1 {
        return 0.0;
    }
    let k = (x / std::f64::consts::LN_2).round();
    let r = (x - k * LN2_HI) - k * LN2_LO;
    let mut sum = 1.0;
    let mut n = 14.0;
    while n >= 1.0 {
        sum = 1.0 + sum * r / n;
        n -= 1.0;
    }
    // Scale by 2^k in two steps so that neither factor over- or underflows.
    let k = k as i64;
    let half = k / 2;
    let pow2 = |e: i64| f64::from_bits(((e + 1023) as u64) << 52);
    sum * pow2(half) * pow2(k - half)
}

/// Standard normal draws by the Marsaglia polar method from a ChaCha20 stream.
pub struct NormalStream {
    rng: ChaCha20Rng,
    spare: Option<f64>,
}

impl NormalStream {
    /// A stream keyed from `seed` (see [`chacha_key`]).
    pub fn new(seed: u64) -> Self {
        NormalStream {
            rng: ChaCha20Rng::from_seed(chacha_key(seed)),
            spare: None,
        }
    }

    /// A uniform draw in (-1, 1): an odd multiple of 2^-53, never 0 and never +-1.
    fn symmetric_uniform(&mut self) -> f64 {
        let k = self.rng.next_u64() >> 11; // 53 bits
        ((2 * k + 1) as f64) * (1.0 / 9_007_199_254_740_992.0) - 1.0
    }

    /// The next N(0, 1) draw (advances the stream; pairs are produced and cached).
    pub fn next_normal(&mut self) -> f64 {
        if let Some(z) = self.spare.take() {
            return z;
        }
        loop {
            let u = self.symmetric_uniform();
            let v = self.symmetric_uniform();
            let s = u * u + v * v;
            if s < 1.0 && s > 0.0 {
                let factor = (-2.0 * portable_ln(s) / s).sqrt();
                self.spare = Some(v * factor);
                return u * factor;
            }
        }
    }
}

/// Simulates the solved model (reads only) and returns the kept paths, in deviations or levels.
pub fn simulate(
    solved: &SolvedModel,
    settings: &SimulationSettings,
) -> Result<Simulation, SimulateError> {
    let ss = match (&solved.solution, solved.status) {
        (Some(ss), Status::Determinate) => ss,
        _ => {
            return Err(SimulateError::NotDeterminate {
                status: solved.status.as_str(),
            })
        }
    };
    check_shapes(solved, ss).map_err(|e| match e {
        MomentsError::Shape(s) => SimulateError::Shape(s),
        _ => SimulateError::NonFiniteSolution,
    })?;
    let ny = solved.variables.len();
    let ne = solved.shocks.len();
    let ns = ss.g.nrows();
    if solved.steady_state.len() != ny || solved.log.len() != ny {
        return Err(SimulateError::SteadyStateLength {
            variables: ny,
            steady_state: solved.steady_state.len(),
            log: solved.log.len(),
        });
    }
    if settings.periods.saturating_mul(ny.max(1)) > MAX_STORED_VALUES {
        return Err(SimulateError::TooLarge {
            periods: settings.periods,
            variables: ny,
        });
    }
    if settings.burn_in > MAX_BURN_IN {
        return Err(SimulateError::BurnInTooLong(settings.burn_in));
    }
    let l = covariance_factor(&solved.covariance, &solved.shocks)?;
    // Row-major copies for the inner loop.
    let row_major = |m: &DMatrix<f64>| -> Vec<f64> { m.transpose().as_slice().to_vec() };
    let (p, q, g, h, lr) = (
        row_major(&ss.p),
        row_major(&ss.q),
        row_major(&ss.g),
        row_major(&ss.h),
        row_major(&l),
    );
    let mut normals = NormalStream::new(settings.seed);
    let mut s = vec![0.0; ns];
    let mut s_next = vec![0.0; ns];
    let mut z = vec![0.0; ne];
    let mut e = vec![0.0; ne];
    let mut paths = DMatrix::<f64>::zeros(settings.periods, ny);
    let total = settings.burn_in + settings.periods;
    for t in 0..total {
        for zj in z.iter_mut() {
            *zj = normals.next_normal();
        }
        for (j, ej) in e.iter_mut().enumerate() {
            // L is lower triangular.
            *ej = (0..=j).map(|k| lr[j * ne + k] * z[k]).sum();
        }
        if t >= settings.burn_in {
            let row = t - settings.burn_in;
            for i in 0..ny {
                let mut acc = 0.0;
                for k in 0..ns {
                    acc += p[i * ns + k] * s[k];
                }
                for (k, ek) in e.iter().enumerate() {
                    acc += q[i * ne + k] * ek;
                }
                paths[(row, i)] = acc;
            }
        }
        for i in 0..ns {
            let mut acc = 0.0;
            for k in 0..ns {
                acc += g[i * ns + k] * s[k];
            }
            for (k, ek) in e.iter().enumerate() {
                acc += h[i * ne + k] * ek;
            }
            s_next[i] = acc;
        }
        std::mem::swap(&mut s, &mut s_next);
    }
    if settings.levels {
        for i in 0..ny {
            let ybar = solved.steady_state[i];
            let log = solved.log[i];
            for v in paths.column_mut(i).iter_mut() {
                *v = if log {
                    ybar * portable_exp(*v)
                } else {
                    ybar + *v
                };
            }
        }
    }
    for i in 0..ny {
        if let Some(t) = paths.column(i).iter().position(|v| !v.is_finite()) {
            return Err(SimulateError::NonFinite {
                variable: solved.variables[i].clone(),
                period: t + 1,
            });
        }
    }
    Ok(Simulation {
        variables: solved.variables.clone(),
        periods: settings.periods,
        paths,
        levels: settings.levels,
        seed: settings.seed,
        burn_in: settings.burn_in,
    })
}

impl Simulation {
    /// The paths of the variables at `columns` (indices into `variables`, in the order given)
    /// only. Indices out of range are skipped. Returns the selection.
    pub fn select(&self, columns: &[usize]) -> Simulation {
        let cols: Vec<usize> = columns
            .iter()
            .copied()
            .filter(|&c| c < self.variables.len())
            .collect();
        Simulation {
            variables: cols.iter().map(|&c| self.variables[c].clone()).collect(),
            paths: DMatrix::from_fn(self.paths.nrows(), cols.len(), |t, j| {
                self.paths[(t, cols[j])]
            }),
            ..self.clone()
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn portable_ln_agrees_with_the_library_logarithm() {
        let mut x = 1e-300;
        while x < 1e300 {
            for &m in &[1.0, 1.3, 1.41, 1.42, 1.9, 0.75] {
                let v = x * m;
                let a = portable_ln(v);
                let b = v.ln();
                assert!(
                    (a - b).abs() <= 4.0 * f64::EPSILON * b.abs().max(1.0),
                    "{v}: {a} {b}"
                );
            }
            x *= 7.3;
        }
        assert_eq!(portable_ln(1.0), 0.0);
        assert!(portable_ln(0.0).is_nan() && portable_ln(-1.0).is_nan());
        let sub = 4e-320;
        assert!((portable_ln(sub) - sub.ln()).abs() < 1e-12);
    }

    #[test]
    fn portable_exp_agrees_with_the_library_exponential() {
        let mut x = -745.0;
        while x < 709.7 {
            let a = portable_exp(x);
            let b = x.exp();
            assert!((a - b).abs() <= 4.0 * f64::EPSILON * b, "{x}: {a} {b}");
            x += 0.731;
        }
        assert_eq!(portable_exp(0.0), 1.0);
        assert_eq!(portable_exp(1000.0), f64::INFINITY);
        assert_eq!(portable_exp(-1000.0), 0.0);
    }

    #[test]
    fn stream_is_reproducible_and_seed_dependent() {
        let a: Vec<f64> = {
            let mut s = NormalStream::new(7);
            (0..10).map(|_| s.next_normal()).collect()
        };
        let b: Vec<f64> = {
            let mut s = NormalStream::new(7);
            (0..10).map(|_| s.next_normal()).collect()
        };
        let c: Vec<f64> = {
            let mut s = NormalStream::new(8);
            (0..10).map(|_| s.next_normal()).collect()
        };
        assert_eq!(a, b);
        assert_ne!(a, c);
    }
}
