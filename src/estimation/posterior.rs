//! The log posterior kernel of the estimated quantities x (spec §10):
//!
//! ```text
//!   log k(x) = sum_i log p_i(x_i) + log L(data | model recalibrated at x)
//! ```
//!
//! where the model at x has every estimated parameter set to its value (derived parameters
//! recomputed, [`Model::with_overrides`]), each estimated `sd(e)` as the standard deviation of
//! innovation e and each estimated `sd(o)` as that of o's measurement error (correlations as
//! calibrated), and L is the exact Gaussian likelihood of the Kalman filter ([`crate::kalman`]).
//! A point where the model has no steady state, no unique stable solution or no finite
//! likelihood has zero density: [`Posterior::log_posterior`] returns -inf and never an error.

use nalgebra::DMatrix;

use super::prior::{PriorDensity, PriorError};
use super::transform::Transform;
use super::EstimationError;
use crate::kalman::{self, KalmanError, KalmanParams, ObservationError};
use crate::model::{Model, OverrideError, PriorTarget};
use crate::policy::{solve_regime, PolicyError, PolicyParams, Regime};
use crate::solution::{PreparedModel, SolveError, SolveOptions, SolvedModel};

/// One estimated quantity: a parameter or an sd, with its prior and its map to R.
#[derive(Debug, Clone, PartialEq)]
pub struct Quantity {
    /// `rho`, or `sd(e_rate)` for a standard deviation.
    pub name: String,
    pub target: PriorTarget,
    pub prior: PriorDensity,
    pub transform: Transform,
    /// The interval the quantity lives on: the prior's, and (0, inf) for a standard deviation.
    pub lo: f64,
    pub hi: f64,
    /// The value in the model file (a starting point for the search).
    pub calibrated: f64,
}

impl Quantity {
    /// Whether the quantity is a standard deviation (which must be positive).
    pub fn is_sd(&self) -> bool {
        matches!(
            self.target,
            PriorTarget::ShockSd(_) | PriorTarget::MeasurementSd(_)
        )
    }
}

/// Why a point of the parameter space has zero posterior density (never stops a run).
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum PointFailure {
    #[error("outside the prior's support")]
    OutsidePrior,
    #[error("{0}")]
    Override(OverrideError),
    #[error("{0}")]
    Solve(SolveError),
    #[error("{0}")]
    Policy(PolicyError),
    #[error("no unique stable solution ({status})")]
    NotDeterminate { status: &'static str },
    #[error("{0}")]
    Observation(ObservationError),
    #[error("{0}")]
    Kalman(KalmanError),
    #[error("the likelihood is not finite")]
    NonFinite,
}

/// The posterior of one model and data set, ready for evaluation from several threads.
pub struct Posterior {
    base: Model,
    prepared: Option<PreparedModel>,
    options: SolveOptions,
    regime: Regime,
    /// N x p in the model's observable order, NaN where missing.
    data: DMatrix<f64>,
    pub quantities: Vec<Quantity>,
    kalman: KalmanParams,
}

impl Posterior {
    /// Builds the posterior of `model`'s priors given `data` (N x p, columns in the order of
    /// `model.observables`; both read only, copied). Errors: no priors, no observables, a prior
    /// that holds no probability, or fewer observed values than estimated quantities.
    pub fn new(
        model: &Model,
        data: &DMatrix<f64>,
        options: SolveOptions,
        regime: Regime,
    ) -> Result<Posterior, EstimationError> {
        if model.priors.is_empty() {
            return Err(EstimationError::NoPriors);
        }
        if model.observables.is_empty() {
            return Err(EstimationError::NoObservables);
        }
        if data.ncols() != model.observables.len() {
            return Err(EstimationError::DataShape {
                columns: data.ncols(),
                observables: model.observables.len(),
            });
        }
        let mut quantities = Vec::with_capacity(model.priors.len());
        for p in &model.priors {
            let (name, calibrated, positive) = match p.target {
                PriorTarget::Parameter(i) => (
                    model.parameters[i].name.clone(),
                    model.parameters[i].value,
                    false,
                ),
                PriorTarget::ShockSd(i) => (
                    format!("sd({})", model.exogenous[i].name),
                    model.covariance[(i, i)].max(0.0).sqrt(),
                    true,
                ),
                PriorTarget::MeasurementSd(i) => {
                    let m = &model.measurement_covariance;
                    let v = if i < m.nrows() && i < m.ncols() {
                        m[(i, i)]
                    } else {
                        0.0
                    };
                    (
                        format!("sd({})", model.observables[i].name),
                        v.max(0.0).sqrt(),
                        true,
                    )
                }
            };
            let prior = PriorDensity::new(p.distribution, p.truncation).map_err(|error| {
                EstimationError::Prior {
                    name: name.clone(),
                    error,
                }
            })?;
            let (mut lo, hi) = (prior.lo, prior.hi);
            if positive {
                lo = lo.max(0.0);
                if !(lo < hi) {
                    return Err(EstimationError::Prior {
                        name,
                        error: PriorError::EmptySupport { lo, hi },
                    });
                }
            }
            quantities.push(Quantity {
                name,
                target: p.target,
                prior,
                transform: Transform::for_interval(lo, hi),
                lo,
                hi,
                calibrated,
            });
        }
        let observed = data.iter().filter(|v| v.is_finite()).count();
        if observed <= quantities.len() {
            return Err(EstimationError::TooFewObservations {
                observed,
                quantities: quantities.len(),
            });
        }
        let prepared = if regime == Regime::Rule {
            Some(PreparedModel::new(model).map_err(EstimationError::Solve)?)
        } else {
            None
        };
        Ok(Posterior {
            base: model.clone(),
            prepared,
            options,
            regime,
            data: data.clone(),
            quantities,
            kalman: KalmanParams::default(),
        })
    }

    /// Number of estimated quantities.
    pub fn dim(&self) -> usize {
        self.quantities.len()
    }

    /// Number of observed (non-missing) data values.
    pub fn observed_values(&self) -> usize {
        self.data.iter().filter(|v| v.is_finite()).count()
    }

    /// Whether every prior is `flat()` (then estimation is maximum likelihood).
    pub fn all_flat(&self) -> bool {
        self.quantities.iter().all(|q| q.prior.is_flat())
    }

    /// The calibrated values, in the order of `quantities`.
    pub fn calibration(&self) -> Vec<f64> {
        self.quantities.iter().map(|q| q.calibrated).collect()
    }

    /// sum_i log p_i(x_i) (-inf outside a support, and for a standard deviation at or below 0).
    pub fn log_prior(&self, x: &[f64]) -> f64 {
        self.quantities
            .iter()
            .zip(x)
            .map(|(q, &v)| {
                let positive = !q.is_sd() || v > 0.0;
                if v >= q.lo && v <= q.hi && positive {
                    q.prior.log_density(v)
                } else {
                    f64::NEG_INFINITY
                }
            })
            .sum()
    }

    /// The model recalibrated at `x` (see the module doc). Returns it, or why it cannot be.
    pub fn model_at(&self, x: &[f64]) -> Result<Model, PointFailure> {
        let targets: Vec<PriorTarget> = self.quantities.iter().map(|q| q.target).collect();
        model_at(&self.base, &targets, x)
    }

    /// log L(data | model at x), or why it does not exist.
    pub fn loglik(&self, x: &[f64]) -> Result<f64, PointFailure> {
        let m = self.model_at(x)?;
        let (model, solved) = solve_point(self.prepared.as_ref(), m, &self.options, self.regime)?;
        let ss = kalman::model_state_space(&model, &solved).map_err(PointFailure::Observation)?;
        let ll =
            kalman::loglik(&ss.system, &self.data, &self.kalman).map_err(PointFailure::Kalman)?;
        if ll.is_finite() {
            Ok(ll)
        } else {
            Err(PointFailure::NonFinite)
        }
    }

    /// log prior + log likelihood at `x`; -inf where either is zero or fails (see module doc).
    pub fn log_posterior(&self, x: &[f64]) -> f64 {
        self.evaluate(x)
            .map_or(f64::NEG_INFINITY, |(lp, ll)| lp + ll)
    }

    /// (log prior, log likelihood) at `x`, or why the density is zero there.
    pub fn evaluate(&self, x: &[f64]) -> Result<(f64, f64), PointFailure> {
        let lp = self.log_prior(x);
        if !(lp > f64::NEG_INFINITY) {
            return Err(PointFailure::OutsidePrior);
        }
        let ll = self.loglik(x)?;
        Ok((lp, ll))
    }

    /// x(z) for every quantity.
    pub fn to_x(&self, z: &[f64]) -> Vec<f64> {
        self.quantities
            .iter()
            .zip(z)
            .map(|(q, &v)| q.transform.to_x(v))
            .collect()
    }

    /// z(x) for every quantity (infinite at an end of an interval).
    pub fn to_z(&self, x: &[f64]) -> Vec<f64> {
        self.quantities
            .iter()
            .zip(x)
            .map(|(q, &v)| q.transform.to_z(v))
            .collect()
    }

    /// The log density of z (for sampling): log k(x(z)) + sum log |dx_i/dz_i|. Returns it with
    /// x(z) and the log likelihood there (-inf and NaN where the density is zero).
    pub fn log_density_z(&self, z: &[f64]) -> (f64, Vec<f64>, f64) {
        let x = self.to_x(z);
        match self.evaluate(&x) {
            Ok((lp, ll)) => {
                let jac: f64 = self
                    .quantities
                    .iter()
                    .zip(z)
                    .map(|(q, &v)| q.transform.log_jacobian(v))
                    .sum();
                let v = lp + ll + jac;
                if v.is_finite() {
                    (v, x, ll)
                } else {
                    (f64::NEG_INFINITY, x, f64::NAN)
                }
            }
            Err(_) => (f64::NEG_INFINITY, x, f64::NAN),
        }
    }
}

/// `base` with each target set to its value in `x` (module doc): parameters through
/// [`Model::with_overrides`] (derived ones recomputed), standard deviations in the covariance
/// matrices with their correlations kept. `base` is read only; returns the new model or why it
/// cannot be made.
pub fn model_at(base: &Model, targets: &[PriorTarget], x: &[f64]) -> Result<Model, PointFailure> {
    let overrides: Vec<(String, f64)> = targets
        .iter()
        .zip(x)
        .filter_map(|(t, &v)| match t {
            PriorTarget::Parameter(i) => base.parameters.get(*i).map(|p| (p.name.clone(), v)),
            _ => None,
        })
        .collect();
    let mut m = if overrides.is_empty() {
        base.clone()
    } else {
        base.with_overrides(&overrides)
            .map_err(PointFailure::Override)?
    };
    for (t, &v) in targets.iter().zip(x) {
        match *t {
            PriorTarget::Parameter(_) => {}
            PriorTarget::ShockSd(i) => set_sd(&mut m.covariance, i, v),
            PriorTarget::MeasurementSd(i) => {
                let p = m.observables.len();
                if m.measurement_covariance.nrows() != p {
                    m.measurement_covariance = DMatrix::zeros(p, p);
                }
                set_sd(&mut m.measurement_covariance, i, v)
            }
        }
    }
    Ok(m)
}

/// Solves `m` under `regime` (with `prepared`, the symbolic preparation of the model, for the
/// rule regime; `None` builds what is needed). Returns the model as solved (an optimal regime
/// adds multipliers) and its solution, or why there is no unique stable one.
pub fn solve_point(
    prepared: Option<&PreparedModel>,
    m: Model,
    options: &SolveOptions,
    regime: Regime,
) -> Result<(Model, SolvedModel), PointFailure> {
    let (model, solved) = match (regime, prepared) {
        (Regime::Rule, Some(prep)) => {
            let (s, _) = prep.solve(&m, options).map_err(PointFailure::Solve)?;
            (m, s)
        }
        (Regime::Rule, None) => {
            let prep = PreparedModel::new(&m).map_err(PointFailure::Solve)?;
            let (s, _) = prep.solve(&m, options).map_err(PointFailure::Solve)?;
            (m, s)
        }
        _ => {
            let r = solve_regime(&m, regime, options, &PolicyParams::default())
                .map_err(PointFailure::Policy)?;
            (r.model, r.solved)
        }
    };
    if solved.solution.is_none() {
        return Err(PointFailure::NotDeterminate {
            status: solved.status.as_str(),
        });
    }
    Ok((model, solved))
}

/// Sets the standard deviation of entry `i` of the covariance `c` to `sd`, keeping the
/// correlations (row and column i scaled; a zero variance becomes sd^2 with no covariances).
fn set_sd(c: &mut DMatrix<f64>, i: usize, sd: f64) {
    if i >= c.nrows() || i >= c.ncols() {
        return;
    }
    let old = c[(i, i)].max(0.0).sqrt();
    if old > 0.0 {
        let f = sd / old;
        for j in 0..c.ncols() {
            c[(i, j)] *= f;
        }
        for j in 0..c.nrows() {
            c[(j, i)] *= f;
        }
    } else {
        for j in 0..c.ncols() {
            c[(i, j)] = 0.0;
            c[(j, i)] = 0.0;
        }
    }
    c[(i, i)] = sd * sd;
}
