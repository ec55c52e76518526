//! Bayesian estimation and maximum likelihood of a model's prior-carrying quantities (spec §10):
//!
//! ```text
//!   p(x | data) ∝ k(x) = p(x) L(data | x),      p(x) = prod_i p_i(x_i)
//! ```
//!
//! x are the parameters and standard deviations named in `priors`; L is the Kalman-filter
//! likelihood of the model recalibrated at x ([`posterior`]). The pipeline: the mode x* of k and
//! the curvature there ([`mode`]; with every prior `flat()` this is maximum likelihood with
//! standard errors), random-walk Metropolis-Hastings chains around it ([`mcmc`]), summaries and
//! convergence diagnostics of the draws ([`diagnostics`]), and two estimates of the marginal
//! likelihood p(data) = ∫ k(x) dx: Laplace at the mode and the modified harmonic mean of Geweke
//! (1999) over the draws ([`harmonic_mean`]). Every reported number is in the quantities as
//! written; the unconstrained coordinates of [`transform`] are used only inside.

pub mod bands;
pub mod diagnostics;
pub mod draws;
pub mod mcmc;
pub mod mode;
pub mod posterior;
pub mod prior;
pub mod transform;

use nalgebra::{DMatrix, DVector};
use statrs::distribution::{ChiSquared, ContinuousCDF};

pub use mcmc::{run_chains, Chain, DrawSink, McmcParams};
pub use mode::{find_mode, Mode, ModeParams};
pub use posterior::{PointFailure, Posterior, Quantity};
pub use prior::{PriorDensity, PriorError};

use crate::solution::SolveError;

/// Why an estimation could not be run.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum EstimationError {
    #[error("the model has no `priors` section, so nothing is estimated (give each estimated parameter a prior; `flat()` for maximum likelihood)")]
    NoPriors,
    #[error("the model declares no observables, so it has no likelihood for data")]
    NoObservables,
    #[error("the data have {columns} series but the model has {observables} observables")]
    DataShape { columns: usize, observables: usize },
    #[error("prior of {name}: {error}")]
    Prior { name: String, error: PriorError },
    #[error(
        "the data hold {observed} observed values, too few for {quantities} estimated quantities"
    )]
    TooFewObservations { observed: usize, quantities: usize },
    #[error("the model cannot be prepared for solving: {0}")]
    Solve(SolveError),
    #[error("no starting point has a positive posterior density ({tried} tried; the first failed: {reason})")]
    NoFiniteStart { tried: usize, reason: String },
    #[error("the optimiser failed: {0}")]
    Optimizer(String),
    #[error("{0}")]
    Settings(String),
    #[error("writing the draws failed: {0}")]
    DrawsFile(String),
}

/// Summary of one quantity's kept draws over all chains.
#[derive(Debug, Clone, PartialEq)]
pub struct Summary {
    pub mean: f64,
    pub sd: f64,
    pub q05: f64,
    pub q50: f64,
    pub q95: f64,
    pub rhat: f64,
    pub ess: f64,
}

/// Everything `saddle estimate` reports.
#[derive(Debug, Clone, PartialEq)]
pub struct Estimate {
    /// Names of the estimated quantities (`rho`, `sd(e_rate)`), file order.
    pub names: Vec<String>,
    /// With every prior flat: maximum likelihood.
    pub maximum_likelihood: bool,
    pub mode: Mode,
    /// Empty when no chains were run.
    pub chains: Vec<Chain>,
    pub summaries: Vec<Summary>,
    /// Geweke's modified harmonic mean (`None` with improper priors or without draws).
    pub harmonic: Option<f64>,
    pub warnings: Vec<String>,
}

/// Thresholds of the diagnostics' warnings, with documented defaults.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DiagnosticParams {
    /// R-hat above this warns (default 1.01, Vehtari et al. 2021, sec. 4).
    pub rhat_max: f64,
    /// Bulk ESS below this per chain warns (default 100 per chain, Vehtari et al. 2021, sec. 4:
    /// "ESS > 400" for four chains).
    pub ess_per_chain_min: f64,
}

impl Default for DiagnosticParams {
    fn default() -> Self {
        DiagnosticParams {
            rhat_max: 1.01,
            ess_per_chain_min: 100.0,
        }
    }
}

/// The mode's covariance carried to z: Sigma_z = D^-1 Sigma_x D^-1, D = diag dx/dz at the mode;
/// without a covariance at the mode, a diagonal with each quantity's prior sd (or a tenth of its
/// size, for flat priors) carried the same way.
pub fn proposal_covariance(post: &Posterior, mode: &Mode) -> DMatrix<f64> {
    let d = post.dim();
    let z = post.to_z(&mode.x);
    let dx: Vec<f64> = post
        .quantities
        .iter()
        .zip(&z)
        .map(|(q, &v)| q.transform.derivative(v))
        .collect();
    let sx = match &mode.covariance {
        Some(c) => c.clone(),
        None => DMatrix::from_diagonal(&DVector::from_iterator(
            d,
            post.quantities.iter().zip(&mode.x).map(|(q, &x)| {
                let s = q.prior.distribution.sd().unwrap_or(0.1 * x.abs().max(1e-3));
                s * s
            }),
        )),
    };
    let mut sz = sx;
    for i in 0..d {
        for j in 0..d {
            sz[(i, j)] /= dx[i] * dx[j];
        }
    }
    sz
}

/// Geweke's (1999) modified harmonic mean: with m, V the mean and covariance of the draws in z,
///
/// ```text
///   1 / p(data) ~ (1/S) sum_s f(z_s) / q(z_s),
///   f(z) = N(z; m, V) 1{(z-m)' V^-1 (z-m) <= chi2_d(tau)} / tau
/// ```
///
/// (q the density of z, with the Jacobian), averaged in logs over tau = 0.1, 0.2, ..., 0.9.
/// Returns log p(data), or `None` without draws or with a singular V.
pub fn harmonic_mean(post: &Posterior, chains: &[Chain]) -> Option<f64> {
    let d = post.dim();
    let mut zs: Vec<(DVector<f64>, f64)> = Vec::new();
    for c in chains {
        for k in 0..c.x.nrows() {
            let x: Vec<f64> = (0..d).map(|i| c.x[(k, i)]).collect();
            let z = DVector::from_vec(post.to_z(&x));
            zs.push((z, c.log_density_z[k]));
        }
    }
    let s = zs.len();
    if s < 2 * d + 2 {
        return None;
    }
    let mut m = DVector::zeros(d);
    for (z, _) in &zs {
        m += z;
    }
    m /= s as f64;
    let mut v = DMatrix::zeros(d, d);
    for (z, _) in &zs {
        let e = z - &m;
        v += &e * e.transpose();
    }
    v /= s as f64;
    let chol = v.cholesky()?;
    let logdet = 2.0 * chol.l().diagonal().iter().map(|x| x.ln()).sum::<f64>();
    let quads: Vec<f64> = zs
        .iter()
        .map(|(z, _)| {
            let e = z - &m;
            let w = chol.solve(&e);
            e.dot(&w)
        })
        .collect();
    let chi = ChiSquared::new(d as f64).ok()?;
    let mut logs = Vec::new();
    for k in 1..=9 {
        let tau = k as f64 / 10.0;
        let cut = chi.inverse_cdf(tau);
        let terms: Vec<f64> = zs
            .iter()
            .zip(&quads)
            .filter(|(_, &q)| q <= cut)
            .map(|((_, lq), &q)| {
                -tau.ln()
                    - 0.5 * d as f64 * (2.0 * std::f64::consts::PI).ln()
                    - 0.5 * logdet
                    - 0.5 * q
                    - lq
            })
            .collect();
        if terms.is_empty() {
            continue;
        }
        let mx = terms.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        let lse = mx + terms.iter().map(|t| (t - mx).exp()).sum::<f64>().ln();
        // log (1/S sum) of f/q over all S draws (the excluded ones contribute 0).
        logs.push(-(lse - (s as f64).ln()));
    }
    if logs.is_empty() {
        None
    } else {
        Some(logs.iter().sum::<f64>() / logs.len() as f64)
    }
}

/// Summaries and diagnostics of the chains (read only), per quantity.
pub fn summarise(d: usize, chains: &[Chain]) -> Vec<Summary> {
    (0..d)
        .map(|i| {
            let cols: Vec<Vec<f64>> = chains
                .iter()
                .map(|c| c.x.column(i).iter().copied().collect())
                .collect();
            let refs: Vec<&[f64]> = cols.iter().map(|c| c.as_slice()).collect();
            let mut all: Vec<f64> = cols.iter().flatten().copied().collect();
            let n = all.len() as f64;
            let mean = all.iter().sum::<f64>() / n;
            let sd = (all.iter().map(|v| (v - mean) * (v - mean)).sum::<f64>() / (n - 1.0)).sqrt();
            all.sort_by(f64::total_cmp);
            Summary {
                mean,
                sd,
                q05: diagnostics::quantile_sorted(&all, 0.05),
                q50: diagnostics::quantile_sorted(&all, 0.5),
                q95: diagnostics::quantile_sorted(&all, 0.95),
                rhat: diagnostics::rhat(&refs),
                ess: diagnostics::ess_bulk(&refs),
            }
        })
        .collect()
}

/// The whole estimation: mode, chains (when `mcmc.draws > 0`... always at least one draw),
/// summaries, diagnostics and warnings, marginal likelihoods. `sink` and `progress` as in
/// [`run_chains`]. Returns the estimate or why it could not be made.
pub fn estimate(
    post: &Posterior,
    mode_params: &ModeParams,
    mcmc: Option<&McmcParams>,
    diag: &DiagnosticParams,
    sink: Option<&dyn DrawSink>,
    progress: Option<&(dyn Fn(u64) + Sync)>,
) -> Result<Estimate, EstimationError> {
    let mode = find_mode(post, mode_params)?;
    let chains = match mcmc {
        Some(p) => {
            let sz = proposal_covariance(post, &mode);
            let z = post.to_z(&mode.x);
            Some(run_chains(post, &z, &sz, p, sink, progress)?)
        }
        None => None,
    };
    Ok(diagnose(post, mode, chains, diag))
}

/// The estimate of `post` from a mode and chains already made (run here, or read from draws
/// files by [`chains_from_draws`]): summaries, diagnostics and their warnings, the harmonic
/// mean. `None` for chains: the mode only. Returns the whole [`Estimate`].
pub fn diagnose(
    post: &Posterior,
    mode: Mode,
    chains: Option<Vec<Chain>>,
    diag: &DiagnosticParams,
) -> Estimate {
    let mut warnings = mode.warnings.clone();
    let names: Vec<String> = post.quantities.iter().map(|q| q.name.clone()).collect();
    let (chains, summaries, harmonic) = match chains {
        Some(chains) => {
            let summaries = summarise(post.dim(), &chains);
            for (k, c) in chains.iter().enumerate() {
                if c.acceptance == 0.0 {
                    warnings.push(format!(
                        "chain {} never moved after the burn-in (acceptance 0); use a smaller step (--step)",
                        k + 1
                    ));
                }
                if c.started_at_mode {
                    warnings.push(format!(
                        "chain {} started at the mode: no dispersed starting point had positive density",
                        k + 1
                    ));
                }
            }
            let m = chains.len() as f64;
            for (name, s) in names.iter().zip(&summaries) {
                if s.rhat > diag.rhat_max {
                    warnings.push(format!(
                        "{name}: R-hat {:.3} is above {}; the chains have not mixed: run longer chains",
                        s.rhat, diag.rhat_max
                    ));
                }
                if s.ess < diag.ess_per_chain_min * m {
                    warnings.push(format!(
                        "{name}: bulk effective sample size {:.0} is below {:.0} ({} per chain); quantiles are imprecise: run longer chains",
                        s.ess,
                        diag.ess_per_chain_min * m,
                        diag.ess_per_chain_min
                    ));
                }
            }
            let proper = post.quantities.iter().all(|q| !q.prior.is_flat());
            let harmonic = if proper {
                harmonic_mean(post, &chains)
            } else {
                None
            };
            (chains, summaries, harmonic)
        }
        None => (Vec::new(), Vec::new(), None),
    };
    Estimate {
        names,
        maximum_likelihood: post.all_flat(),
        mode,
        chains,
        summaries,
        harmonic,
        warnings,
    }
}

/// Fewest kept draws per chain read from files (R-hat and ESS need at least 4).
pub const MIN_FILE_DRAWS: usize = 4;

/// The chains of a draws file (or merged files) for `post`: one per (seed, chain), rows in draw
/// order, every chain cut to the shortest one's length (the diagnostics take chains of equal
/// length). log q(z) = logpost + sum log |dx/dz| is recomputed from the file's `logpost`; the
/// acceptance rate is the share of rows that differ from the row before. Errors: the files'
/// quantities are not `post`'s (same names, same order), or a chain has fewer than
/// [`MIN_FILE_DRAWS`] draws.
pub fn chains_from_draws(
    post: &Posterior,
    draws: &draws::Draws,
) -> Result<Vec<Chain>, EstimationError> {
    let names: Vec<String> = post.quantities.iter().map(|q| q.name.clone()).collect();
    if draws.names != names {
        return Err(EstimationError::Settings(format!(
            "the draws files hold {} but the model estimates {}",
            draws.names.join(", "),
            names.join(", ")
        )));
    }
    let groups = draws.chains();
    let n = groups.iter().map(|(_, r)| r.len()).min().unwrap_or(0);
    if n < MIN_FILE_DRAWS {
        return Err(EstimationError::Settings(format!(
            "a chain in the draws files has {n} draws; at least {MIN_FILE_DRAWS} are needed"
        )));
    }
    let d = names.len();
    Ok(groups
        .iter()
        .map(|(_, rows)| {
            let rows = &rows[..n];
            let mut x = DMatrix::zeros(n, d);
            let mut logpost = Vec::with_capacity(n);
            let mut lq = Vec::with_capacity(n);
            let mut moved = 0usize;
            for (k, &r) in rows.iter().enumerate() {
                for i in 0..d {
                    x[(k, i)] = draws.x[r][i];
                }
                if k > 0 && draws.x[r] != draws.x[rows[k - 1]] {
                    moved += 1;
                }
                let z = post.to_z(&draws.x[r]);
                let jac: f64 = post
                    .quantities
                    .iter()
                    .zip(&z)
                    .map(|(q, &v)| q.transform.log_jacobian(v))
                    .sum();
                logpost.push(draws.logpost[r]);
                lq.push(draws.logpost[r] + jac);
            }
            Chain {
                x,
                logpost,
                log_density_z: lq,
                acceptance: if n > 1 {
                    moved as f64 / (n - 1) as f64
                } else {
                    0.0
                },
                burn_in_acceptance: f64::NAN,
                started_at_mode: false,
            }
        })
        .collect())
}
