//! Random-walk Metropolis-Hastings in the unconstrained z of [`super::transform`]:
//!
//! ```text
//!   z' = z + L u,  u ~ N(0, I),  L L' = c Sigma,  c = 2.38^2 / d   (Roberts, Gelman, Gilks 1997)
//!   accept with probability min(1, exp(log q(z') - log q(z))),
//!   log q(z) = log k(x(z)) + sum_i log |dx_i/dz_i|                  (the density of z)
//! ```
//!
//! Sigma starts as the inverse Hessian at the mode carried to z (Sigma_z = D^-1 Sigma_x D^-1,
//! D = diag dx/dz at the mode). During the burn-in only, the proposal adapts as the adaptive
//! Metropolis of Roberts and Rosenthal (2009, "Examples of adaptive MCMC", JCGS 18, sec. 2): after
//! 2d burn-in draws it is the mixture (1 - beta) N(0, c Sigma_n) + beta N(0, 0.1^2/d Sigma_0) with
//! Sigma_n the covariance of the chain so far and beta = 0.05 (their fixed component 0.1^2 I/d is
//! taken relative to Sigma_0 here so that it does not depend on units). After the burn-in the
//! proposal is fixed at N(0, c Sigma_burn), so the kept draws are an ordinary Metropolis chain.
//!
//! Each chain draws from its own ChaCha20 stream (key from the seed as in
//! [`crate::analysis::simulate::chacha_key`], stream number = chain number), so the draws depend
//! on the seed and the chain count only, never on the number of threads.

use std::sync::atomic::{AtomicBool, Ordering};

use nalgebra::{DMatrix, DVector};
use rand_chacha::ChaCha20Rng;
use rand_core::{RngCore, SeedableRng};
use rayon::prelude::*;

use super::posterior::Posterior;
use super::EstimationError;
use crate::analysis::simulate::{chacha_key, portable_ln};

/// Largest number of chains.
pub const MAX_CHAINS: usize = 256;
/// Largest number of kept draws per chain times the number of estimated quantities (stored in
/// memory for the diagnostics: 2e8 doubles are 1.6 GB).
pub const MAX_STORED: usize = 200_000_000;

/// Tuning knobs of the sampler, with documented defaults ([`McmcParams::default`]).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct McmcParams {
    /// Number of chains (default 4).
    pub chains: usize,
    /// Kept draws per chain (default 2000).
    pub draws: usize,
    /// Burn-in draws per chain, dropped, during which the proposal adapts (default 1000).
    pub burn_in: usize,
    pub seed: u64,
    /// Factor on the proposal's standard deviations (default 1: the 2.38/sqrt(d) scaling;
    /// smaller when a chain never moves).
    pub step: f64,
    /// Starting points: the mode plus `start_spread` times a draw of N(0, Sigma_z) (default 1,
    /// overdispersed enough for R-hat to see chains that have not mixed).
    pub start_spread: f64,
    /// Draws of a starting point tried before a chain starts at the mode (default 100).
    pub start_tries: usize,
    /// Mixture weight beta of the fixed component during adaptation (default 0.05, Roberts and
    /// Rosenthal 2009).
    pub adapt_beta: f64,
    /// The adapted covariance's Cholesky factor is recomputed every this many draws (default 20).
    pub adapt_every: usize,
    /// Rows written to the draws file at a time per chain (default 100).
    pub flush_every: usize,
}

impl Default for McmcParams {
    fn default() -> Self {
        McmcParams {
            chains: 4,
            draws: 2000,
            burn_in: 1000,
            seed: 1,
            step: 1.0,
            start_spread: 1.0,
            start_tries: 100,
            adapt_beta: 0.05,
            adapt_every: 20,
            flush_every: 100,
        }
    }
}

/// Where kept draws go while the chains run: complete CSV rows `seed,chain,draw,x...,logpost`.
pub trait DrawSink: Sync {
    /// Writes `rows` (complete lines) in one piece. Returns an error message on failure.
    fn write_rows(&self, rows: &str) -> Result<(), String>;
}

/// One chain's kept draws.
#[derive(Debug, Clone, PartialEq)]
pub struct Chain {
    /// draws x d, in x.
    pub x: DMatrix<f64>,
    /// log k(x) of each kept draw (log prior + log likelihood, no Jacobian).
    pub logpost: Vec<f64>,
    /// log q(z) of each kept draw (with the Jacobian; for the harmonic-mean estimate).
    pub log_density_z: Vec<f64>,
    /// Share of accepted proposals among the kept draws.
    pub acceptance: f64,
    /// Share accepted during the burn-in.
    pub burn_in_acceptance: f64,
    /// Whether the chain started at the mode because no overdispersed start had positive density.
    pub started_at_mode: bool,
}

/// Standard normal and uniform draws from one chain's ChaCha20 stream (Marsaglia polar method
/// with the portable logarithm, as in [`crate::analysis::simulate`]).
struct ChainRng {
    rng: ChaCha20Rng,
    spare: Option<f64>,
}

impl ChainRng {
    fn new(seed: u64, chain: usize) -> ChainRng {
        let mut rng = ChaCha20Rng::from_seed(chacha_key(seed));
        rng.set_stream(chain as u64);
        ChainRng { rng, spare: None }
    }
    /// Uniform in (0, 1): an odd multiple of 2^-54, never 0 or 1.
    fn uniform(&mut self) -> f64 {
        let k = self.rng.next_u64() >> 11;
        ((2 * k + 1) as f64) * (1.0 / 18_014_398_509_481_984.0)
    }
    fn normal(&mut self) -> f64 {
        if let Some(z) = self.spare.take() {
            return z;
        }
        loop {
            let u = 2.0 * self.uniform() - 1.0;
            let v = 2.0 * self.uniform() - 1.0;
            let s = u * u + v * v;
            if s < 1.0 && s > 0.0 {
                let f = (-2.0 * portable_ln(s) / s).sqrt();
                self.spare = Some(v * f);
                return u * f;
            }
        }
    }
}

/// Lower Cholesky factor of a symmetric `m`, with a diagonal fallback when it is not positive
/// definite (`None` when not even the diagonal is).
fn factor(m: &DMatrix<f64>) -> Option<DMatrix<f64>> {
    if let Some(c) = m.clone().cholesky() {
        return Some(c.l());
    }
    let d = m.nrows();
    if (0..d).all(|i| m[(i, i)] > 0.0 && m[(i, i)].is_finite()) {
        Some(DMatrix::from_diagonal(&DVector::from_iterator(
            d,
            (0..d).map(|i| m[(i, i)].sqrt()),
        )))
    } else {
        None
    }
}

/// Runs `params.chains` chains in parallel from around `mode_z` with initial proposal covariance
/// `sigma_z` (both in z). Kept draws go to `sink` as they are made (when given) and `progress`
/// is called with the number of new iterations every so often. Returns the chains in order.
pub fn run_chains(
    post: &Posterior,
    mode_z: &[f64],
    sigma_z: &DMatrix<f64>,
    params: &McmcParams,
    sink: Option<&dyn DrawSink>,
    progress: Option<&(dyn Fn(u64) + Sync)>,
) -> Result<Vec<Chain>, EstimationError> {
    let d = post.dim();
    if params.chains == 0 || params.chains > MAX_CHAINS {
        return Err(EstimationError::Settings(format!(
            "the number of chains must be between 1 and {MAX_CHAINS}"
        )));
    }
    if params.draws == 0 || params.draws.saturating_mul(d.max(1)) > MAX_STORED {
        return Err(EstimationError::Settings(format!(
            "the number of draws times the {d} estimated quantities must be between 1 and {MAX_STORED}"
        )));
    }
    if !(params.step.is_finite() && params.step > 0.0) {
        return Err(EstimationError::Settings(format!(
            "the proposal step must be a positive number, not {}",
            params.step
        )));
    }
    let l0 = factor(sigma_z).ok_or_else(|| {
        EstimationError::Settings("the proposal covariance has a non-positive variance".into())
    })?;
    let failed = AtomicBool::new(false);
    let error = std::sync::Mutex::new(None::<String>);
    let chains: Vec<Chain> = (0..params.chains)
        .into_par_iter()
        .map(|c| {
            run_one(
                post, c, mode_z, &l0, params, sink, progress, &failed, &error,
            )
        })
        .collect();
    if let Some(e) = error.lock().ok().and_then(|mut g| g.take()) {
        return Err(EstimationError::DrawsFile(e));
    }
    Ok(chains)
}

/// Runs chain number `chain` from around `mode_z` with the initial proposal factor `l0`
/// (lower Cholesky of Sigma_z). Returns its kept draws; stops early (fewer rows) when `failed`
/// is set by a failed write, whose message goes to `error`.
#[allow(clippy::too_many_arguments)]
fn run_one(
    post: &Posterior,
    chain: usize,
    mode_z: &[f64],
    l0: &DMatrix<f64>,
    params: &McmcParams,
    sink: Option<&dyn DrawSink>,
    progress: Option<&(dyn Fn(u64) + Sync)>,
    failed: &AtomicBool,
    error: &std::sync::Mutex<Option<String>>,
) -> Chain {
    let d = mode_z.len();
    let mut rng = ChainRng::new(params.seed, chain);
    let c = params.step * params.step * 2.38 * 2.38 / d as f64;
    let c_fixed = params.step * params.step * 0.01 / d as f64;
    let mut u = DVector::zeros(d);
    let mut draw_normal = |rng: &mut ChainRng, l: &DMatrix<f64>, scale: f64| {
        for i in 0..d {
            u[i] = rng.normal();
        }
        (l * &u) * scale.sqrt()
    };
    // Start.
    let mut z: Vec<f64> = mode_z.to_vec();
    let (mut lq, mut x, mut ll) = post.log_density_z(&z);
    let mut started_at_mode = true;
    for _ in 0..params.start_tries {
        let step = draw_normal(&mut rng, l0, params.start_spread * params.start_spread);
        let cand: Vec<f64> = (0..d).map(|i| mode_z[i] + step[i]).collect();
        let (q, xc, lc) = post.log_density_z(&cand);
        if q.is_finite() {
            z = cand;
            lq = q;
            x = xc;
            ll = lc;
            started_at_mode = false;
            break;
        }
    }
    let mut lp = post.log_prior(&x) + ll;
    // Adaptation state (Welford's running mean and covariance of z over the burn-in).
    let mut mean = DVector::from_column_slice(&z);
    let mut m2 = DMatrix::<f64>::zeros(d, d);
    let mut n_seen = 1usize;
    let mut l_adapt: Option<DMatrix<f64>> = None;
    let mut l_kept = l0.clone();
    let mut kept_scale = c;
    let total = params.burn_in + params.draws;
    let mut out_x = DMatrix::zeros(params.draws, d);
    let mut out_lp = Vec::with_capacity(params.draws);
    let mut out_lq = Vec::with_capacity(params.draws);
    let (mut acc_burn, mut acc_kept) = (0usize, 0usize);
    let mut rows = String::new();
    let mut pending = 0u64;
    for it in 0..total {
        if failed.load(Ordering::Relaxed) {
            break;
        }
        let burning = it < params.burn_in;
        if it == params.burn_in {
            // Fix the proposal for the kept draws.
            if n_seen > 2 * d && acc_burn > 0 {
                let cov = &m2 / (n_seen as f64 - 1.0);
                if let Some(l) = cov.clone().cholesky().map(|f| f.l()) {
                    l_kept = l;
                    kept_scale = c;
                }
            }
        }
        let step = if burning {
            match &l_adapt {
                Some(l) if rng.uniform() >= params.adapt_beta => draw_normal(&mut rng, l, c),
                Some(_) => draw_normal(&mut rng, l0, c_fixed),
                None => draw_normal(&mut rng, l0, c),
            }
        } else {
            draw_normal(&mut rng, &l_kept, kept_scale)
        };
        let cand: Vec<f64> = (0..d).map(|i| z[i] + step[i]).collect();
        let (q, xc, lc) = post.log_density_z(&cand);
        let accept = q.is_finite() && (q >= lq || portable_ln(rng.uniform()) < q - lq);
        if accept {
            z = cand;
            lq = q;
            lp = post.log_prior(&xc) + lc;
            x = xc;
            if burning {
                acc_burn += 1;
            } else {
                acc_kept += 1;
            }
        }
        if burning {
            n_seen += 1;
            let zv = DVector::from_column_slice(&z);
            let delta = &zv - &mean;
            mean += &delta / n_seen as f64;
            let delta2 = &zv - &mean;
            m2 += &delta * delta2.transpose();
            if n_seen > 2 * d && (it + 1).is_multiple_of(params.adapt_every.max(1)) && acc_burn > 0
            {
                let cov = &m2 / (n_seen as f64 - 1.0);
                if let Some(l) = cov.cholesky().map(|f| f.l()) {
                    l_adapt = Some(l);
                }
            }
        } else {
            let k = it - params.burn_in;
            for i in 0..d {
                out_x[(k, i)] = x[i];
            }
            out_lp.push(lp);
            out_lq.push(lq);
            if sink.is_some() {
                use std::fmt::Write;
                let _ = write!(rows, "{},{},{}", params.seed, chain + 1, k + 1);
                for v in &x {
                    let _ = write!(rows, ",{v:e}");
                }
                let _ = writeln!(rows, ",{lp:e}");
                if (k + 1).is_multiple_of(params.flush_every.max(1)) || k + 1 == params.draws {
                    if let Some(s) = sink {
                        if let Err(e) = s.write_rows(&rows) {
                            failed.store(true, Ordering::Relaxed);
                            if let Ok(mut g) = error.lock() {
                                g.get_or_insert(e);
                            }
                        }
                    }
                    rows.clear();
                }
            }
        }
        pending += 1;
        if pending == 100 {
            if let Some(p) = progress {
                p(pending);
            }
            pending = 0;
        }
    }
    if let Some(p) = progress {
        if pending > 0 {
            p(pending);
        }
    }
    let kept = out_lp.len();
    if kept < params.draws {
        out_x = out_x.rows(0, kept).into_owned();
    }
    Chain {
        x: out_x,
        logpost: out_lp,
        log_density_z: out_lq,
        acceptance: if kept > 0 {
            acc_kept as f64 / kept as f64
        } else {
            0.0
        },
        burn_in_acceptance: if params.burn_in > 0 {
            acc_burn as f64 / params.burn_in as f64
        } else {
            f64::NAN
        },
        started_at_mode,
    }
}
