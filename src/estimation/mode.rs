//! The posterior mode (or, with flat priors, the maximum-likelihood estimate) and its curvature:
//!
//! ```text
//!   x* = argmax_x log k(x),          H = d^2 log k / dx dx' at x*   (central differences in x)
//!   mode_sd_i = sqrt((-H)^-1_ii)
//!   log p(data) ~ log k(x*) + (d/2) log 2 pi - (1/2) log det(-H)     (Laplace approximation)
//! ```
//!
//! The search runs in the unconstrained z of [`super::transform`] (so no step leaves a support)
//! on log k(x(z)) without Jacobian: its maximum is x* itself, so the reported mode is that of the
//! parameters as written. The optimiser is the Nelder-Mead simplex of the `argmin` crate (Nelder
//! and Mead 1965; derivative free, since the likelihood's derivatives are not available), run from
//! several starting points (the calibration, the prior means, points a prior sd away) and
//! restarted from its best point until a restart gains no more than the tolerance, a common
//! remedy for the simplex's premature collapse (common practice).

use argmin::core::{CostFunction, Error as ArgminError, Executor, State};
use argmin::solver::neldermead::NelderMead;
use nalgebra::DMatrix;

use super::posterior::Posterior;
use super::EstimationError;

/// Tuning knobs of the mode search, with documented defaults ([`ModeParams::default`]).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ModeParams {
    /// Largest number of starting points tried (default 4: calibration, prior means, and points
    /// one prior sd above and below them as far as they are distinct).
    pub starts: usize,
    /// Iteration cap of one simplex run (default 4000: a 10-parameter search converges in a
    /// few hundred; the cap ends a run that wanders).
    pub max_iters: u64,
    /// A run ends when the sd of the simplex's values of log k is below this (default 1e-9:
    /// log k is of the order of the sample size; 1e-9 is far below any difference that matters).
    pub tolerance: f64,
    /// Largest number of restarts from the best point (default 5).
    pub restarts: usize,
    /// Initial simplex: each vertex moves one z by this much (default 0.2).
    pub simplex_step: f64,
    /// Relative step of the finite-difference Hessian (default 1e-4 of max(|x|, scale) where
    /// scale is the prior sd or 1: truncation error O(h^2) and rounding O(eps/h^2) balance near
    /// 1e-4 for log k of moderate size).
    pub hessian_step: f64,
}

impl Default for ModeParams {
    fn default() -> Self {
        ModeParams {
            starts: 4,
            max_iters: 4000,
            tolerance: 1e-9,
            restarts: 5,
            simplex_step: 0.2,
            hessian_step: 1e-4,
        }
    }
}

/// What the search found.
#[derive(Debug, Clone, PartialEq)]
pub struct Mode {
    /// x*, in the order of the posterior's quantities.
    pub x: Vec<f64>,
    pub log_posterior: f64,
    pub log_prior: f64,
    pub loglik: f64,
    /// Hessian of log k in x at x*.
    pub hessian: DMatrix<f64>,
    /// (-H)^-1 when -H is positive definite.
    pub covariance: Option<DMatrix<f64>>,
    /// sqrt of the diagonal of `covariance` (NaN without it).
    pub sd: Vec<f64>,
    /// The Laplace approximation of log p(data) (`None` with flat priors or without a positive
    /// definite -H).
    pub laplace: Option<f64>,
    /// log k reached from each starting point (-inf where the start had zero density).
    pub start_values: Vec<f64>,
    /// Evaluations of log k spent.
    pub evaluations: usize,
    pub warnings: Vec<String>,
}

struct Problem<'a> {
    post: &'a Posterior,
    count: std::cell::Cell<usize>,
}

impl CostFunction for Problem<'_> {
    type Param = Vec<f64>;
    type Output = f64;
    fn cost(&self, z: &Vec<f64>) -> Result<f64, ArgminError> {
        self.count.set(self.count.get() + 1);
        let v = self.post.log_posterior(&self.post.to_x(z));
        Ok(if v.is_finite() { -v } else { f64::INFINITY })
    }
}

/// Starting points in x: the calibration, then the prior means, then a prior sd above and below
/// them (each kept only when it has positive prior density and lies inside every support).
fn starting_points(post: &Posterior, n: usize) -> Vec<Vec<f64>> {
    let cal = post.calibration();
    let mean: Vec<f64> = post
        .quantities
        .iter()
        .zip(&cal)
        .map(|(q, &c)| q.prior.distribution.mean().unwrap_or(c))
        .collect();
    let shift = |sign: f64| -> Vec<f64> {
        post.quantities
            .iter()
            .zip(&mean)
            .map(|(q, &m)| {
                let s = q.prior.distribution.sd().unwrap_or(0.1 * m.abs().max(0.1));
                m + sign * 0.5 * s
            })
            .collect()
    };
    let mut out: Vec<Vec<f64>> = Vec::new();
    let (up, down) = (shift(1.0), shift(-1.0));
    for cand in [cal, mean, up, down] {
        let interior = post
            .quantities
            .iter()
            .zip(&cand)
            .all(|(q, &v)| q.transform.to_z(v).is_finite());
        if interior && !out.contains(&cand) {
            out.push(cand);
        }
        if out.len() >= n {
            break;
        }
    }
    out
}

/// One simplex run from `z0`; returns (best z, best -log k).
fn simplex(
    problem: Problem<'_>,
    z0: &[f64],
    params: &ModeParams,
) -> Result<(Vec<f64>, f64, usize), EstimationError> {
    let d = z0.len();
    let mut vertices = vec![z0.to_vec()];
    for i in 0..d {
        let mut v = z0.to_vec();
        v[i] += params.simplex_step;
        vertices.push(v);
    }
    let solver = NelderMead::new(vertices)
        .with_sd_tolerance(params.tolerance)
        .map_err(|e| EstimationError::Optimizer(e.to_string()))?;
    let res = Executor::new(problem, solver)
        .configure(|s| s.max_iters(params.max_iters))
        .run()
        .map_err(|e| EstimationError::Optimizer(e.to_string()))?;
    let evals = res.problem.problem.as_ref().map_or(0, |p| p.count.get());
    let state = res.state();
    let best = state
        .get_best_param()
        .cloned()
        .unwrap_or_else(|| z0.to_vec());
    Ok((best, state.get_best_cost(), evals))
}

/// Finds the mode of `post` (read only) and the curvature there; see the module doc. Errors when
/// no starting point has positive density, or the optimiser fails.
pub fn find_mode(post: &Posterior, params: &ModeParams) -> Result<Mode, EstimationError> {
    let d = post.dim();
    let starts = starting_points(post, params.starts.max(1));
    let mut evaluations = 0usize;
    let mut best: Option<(Vec<f64>, f64)> = None;
    let mut start_values = Vec::new();
    let mut first_failure = None;
    for x0 in &starts {
        let f0 = post.evaluate(x0);
        evaluations += 1;
        if let Err(e) = &f0 {
            first_failure.get_or_insert_with(|| e.to_string());
            start_values.push(f64::NEG_INFINITY);
            continue;
        }
        let mut z = post.to_z(x0);
        let mut cost = f64::INFINITY;
        for _ in 0..=params.restarts {
            let problem = Problem {
                post,
                count: std::cell::Cell::new(0),
            };
            let (z1, c1, n) = simplex(problem, &z, params)?;
            evaluations += n;
            let gain = cost - c1;
            if c1 < cost {
                z = z1;
                cost = c1;
            }
            if !(gain > params.tolerance) {
                break;
            }
        }
        start_values.push(-cost);
        if best.as_ref().is_none_or(|(_, c)| cost < *c) {
            best = Some((z, cost));
        }
    }
    let Some((z, cost)) = best.filter(|(_, c)| c.is_finite()) else {
        return Err(EstimationError::NoFiniteStart {
            tried: starts.len(),
            reason: first_failure.unwrap_or_else(|| "no starting point inside the priors".into()),
        });
    };
    let x = post.to_x(&z);
    let (log_prior, loglik) = post
        .evaluate(&x)
        .map_err(|e| EstimationError::Optimizer(format!("the mode found has zero density: {e}")))?;
    let mut warnings = Vec::new();
    let (hessian, n_h) = hessian(post, &x, params.hessian_step);
    evaluations += n_h;
    let neg = -&hessian;
    let covariance = if neg.iter().all(|v| v.is_finite()) {
        neg.clone().cholesky().map(|c| c.inverse())
    } else {
        None
    };
    let sd: Vec<f64> = match &covariance {
        Some(c) => (0..d).map(|i| c[(i, i)].sqrt()).collect(),
        None => {
            warnings.push(
                "the Hessian of the log posterior at the mode is not negative definite (a flat \
                 direction, or the mode lies on an edge of the support): mode_sd is unknown"
                    .to_string(),
            );
            vec![f64::NAN; d]
        }
    };
    let log_posterior = -cost;
    // The Laplace approximation needs a proper prior for every quantity.
    let proper = post.quantities.iter().all(|q| !q.prior.is_flat());
    let laplace = if proper && covariance.is_some() {
        neg.clone().cholesky().map(|c| {
            let logdet = 2.0 * c.l().diagonal().iter().map(|v| v.ln()).sum::<f64>();
            log_posterior + 0.5 * d as f64 * (2.0 * std::f64::consts::PI).ln() - 0.5 * logdet
        })
    } else {
        None
    };
    if !post.all_flat() && post.quantities.iter().any(|q| q.prior.is_flat()) {
        warnings.push(
            "some priors are flat() (improper): the marginal likelihood is not defined".into(),
        );
    }
    Ok(Mode {
        x,
        log_posterior: log_prior + loglik,
        log_prior,
        loglik,
        hessian,
        covariance,
        sd,
        laplace,
        start_values,
        evaluations,
        warnings,
    })
}

/// Central-difference Hessian of log k at `x` (read only) with steps h_i = `rel` max(|x_i|, s_i)
/// (s_i the prior sd, or 1), shortened to stay a quarter of the way from any end of a support.
/// Returns it and the number of evaluations.
pub fn hessian(post: &Posterior, x: &[f64], rel: f64) -> (DMatrix<f64>, usize) {
    let d = x.len();
    let h: Vec<f64> = post
        .quantities
        .iter()
        .zip(x)
        .map(|(q, &v)| {
            let scale = q.prior.distribution.sd().unwrap_or(1.0);
            let mut h = rel * v.abs().max(scale);
            let room = (v - q.prior.lo).min(q.prior.hi - v);
            let room = match q.transform {
                super::transform::Transform::Lower { lo } => room.min(v - lo),
                super::transform::Transform::Interval { lo, hi } => room.min(v - lo).min(hi - v),
                super::transform::Transform::Upper { hi } => room.min(hi - v),
                super::transform::Transform::Identity => room,
            };
            if room.is_finite() {
                h = h.min(0.25 * room);
            }
            h
        })
        .collect();
    let f = |dx: &[(usize, f64)]| {
        let mut y = x.to_vec();
        for &(i, s) in dx {
            y[i] += s;
        }
        post.log_posterior(&y)
    };
    let f0 = f(&[]);
    let mut n = 1;
    let mut hm = DMatrix::zeros(d, d);
    for i in 0..d {
        let fp = f(&[(i, h[i])]);
        let fm = f(&[(i, -h[i])]);
        n += 2;
        hm[(i, i)] = (fp - 2.0 * f0 + fm) / (h[i] * h[i]);
        for j in 0..i {
            let fpp = f(&[(i, h[i]), (j, h[j])]);
            let fpm = f(&[(i, h[i]), (j, -h[j])]);
            let fmp = f(&[(i, -h[i]), (j, h[j])]);
            let fmm = f(&[(i, -h[i]), (j, -h[j])]);
            n += 4;
            let v = (fpp - fpm - fmp + fmm) / (4.0 * h[i] * h[j]);
            hm[(i, j)] = v;
            hm[(j, i)] = v;
        }
    }
    (hm, n)
}
