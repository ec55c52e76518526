//! Impulse responses.
//!
//! Contract: for a determinate solution y_t = P s_{t-1} + Q e_t, s_t = G s_{t-1} + H e_t and an
//! impulse e_0 with no innovations after it and s_{-1} = 0, the response at horizon h is
//! y_0 = Q e_0, and y_h = P s_{h-1} with s_0 = H e_0, s_h = G s_{h-1}. Responses are deviations
//! from the steady state (log deviations for `log` variables). The impulse for innovation k is
//!
//! - `OneSd` (the default): one standard deviation of e_k together with the co-movement of the
//!   others that it predicts, e_0 = E[e | e_k = sd_k] = Sigma u_k / sd_k (the generalized impulse
//!   of Pesaran and Shin 1998, Economics Letters 58). With uncorrelated innovations it is
//!   sd_k u_k; for the first-declared innovation it is also its Cholesky impulse, so it agrees
//!   with the variance decomposition's orthogonalisation in declaration order.
//! - `OneSdAlone`: sd_k u_k, the other innovations held at zero even when they correlate.
//! - `Unit`: u_k.

use nalgebra::{DMatrix, DVector};

use crate::solution::{SolvedModel, Status};

/// Longest horizon accepted (a response of 10^5 periods is already far beyond any use; the cap
/// bounds memory at variables * horizon * 8 bytes per shock).
pub const MAX_HORIZON: usize = 100_000;

/// Most response values computed in one call (shocks x variables x periods): 2e7 values are
/// 160 MB, beyond which the request is a mistake rather than an analysis.
pub const MAX_VALUES: usize = 20_000_000;

/// The size of the impulse.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ImpulseSize {
    /// One standard deviation of the innovation with the co-movement of the correlated others.
    OneSd,
    /// One standard deviation of the innovation alone.
    OneSdAlone,
    /// A unit impulse.
    Unit,
}

impl ImpulseSize {
    /// The contract's spelling (`one-sd`, `unit`).
    pub fn as_str(self) -> &'static str {
        match self {
            ImpulseSize::OneSd => "one-sd",
            ImpulseSize::OneSdAlone => "one-sd-alone",
            ImpulseSize::Unit => "unit",
        }
    }
}

/// Responses of every declared variable to each selected innovation.
#[derive(Debug, Clone, PartialEq)]
pub struct ImpulseResponses {
    pub horizon: usize,
    pub size: ImpulseSize,
    /// Names of the shocked innovations, in the order asked.
    pub shocks: Vec<String>,
    /// Declared variables, declaration order.
    pub variables: Vec<String>,
    /// Per shock: variables x (horizon + 1).
    pub responses: Vec<DMatrix<f64>>,
    /// Per shock: the impulse size of the shocked innovation itself.
    pub impulse: Vec<f64>,
    /// Every declared innovation, declaration order (the entries of an impulse vector).
    pub innovations: Vec<String>,
    /// Per shock: the whole impulse vector e_0 (one entry per declared innovation).
    pub impulse_vectors: Vec<DVector<f64>>,
}

/// Why impulse responses could not be computed.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum IrfError {
    #[error("impulse responses need a unique stable solution, but the model's status is {0}")]
    NoSolution(&'static str),
    #[error("innovation index {0} does not exist")]
    UnknownShock(usize),
    #[error("the horizon {0} is above the limit of {MAX_HORIZON} periods")]
    HorizonTooLong(usize),
    #[error("{0} response values were asked for (shocks x variables x periods), above the limit of {MAX_VALUES}; ask for fewer shocks or a shorter horizon")]
    TooMany(usize),
    #[error("the standard deviation of {shock} is not a finite non-negative number ({value})")]
    BadSd { shock: String, value: f64 },
}

/// Computes the responses to each innovation in `shocks` (indices into `solved.shocks`; empty
/// means all) for `horizon` periods after the impulse (see the module doc).
pub fn impulse_responses(
    solved: &SolvedModel,
    shocks: &[usize],
    size: ImpulseSize,
    horizon: usize,
) -> Result<ImpulseResponses, IrfError> {
    let Some(space) = solved.solution.as_ref() else {
        return Err(IrfError::NoSolution(solved.status.as_str()));
    };
    if solved.status != Status::Determinate {
        return Err(IrfError::NoSolution(solved.status.as_str()));
    }
    if horizon > MAX_HORIZON {
        return Err(IrfError::HorizonTooLong(horizon));
    }
    let all: Vec<usize> = (0..solved.shocks.len()).collect();
    let shocks = if shocks.is_empty() { &all[..] } else { shocks };
    let nv = space.p.nrows();
    let values = shocks
        .len()
        .saturating_mul(nv.max(1))
        .saturating_mul(horizon + 1);
    if values > MAX_VALUES {
        return Err(IrfError::TooMany(values));
    }
    let mut responses = Vec::with_capacity(shocks.len());
    let mut impulse = Vec::with_capacity(shocks.len());
    let mut vectors = Vec::with_capacity(shocks.len());
    let mut names = Vec::with_capacity(shocks.len());
    for &k in shocks {
        if k >= space.q.ncols() || k >= solved.shocks.len() {
            return Err(IrfError::UnknownShock(k));
        }
        let ne = space.q.ncols();
        let sigma = |i: usize, j: usize| -> f64 {
            if i < solved.covariance.nrows() && j < solved.covariance.ncols() {
                solved.covariance[(i, j)]
            } else if i == j {
                1.0
            } else {
                0.0
            }
        };
        let sd = {
            let var = sigma(k, k);
            if !(var.is_finite() && var >= 0.0) {
                return Err(IrfError::BadSd {
                    shock: solved.shocks[k].clone(),
                    value: var.sqrt(),
                });
            }
            var.sqrt()
        };
        let mut vector = DVector::<f64>::zeros(ne);
        let amount = match size {
            ImpulseSize::Unit => {
                vector[k] = 1.0;
                1.0
            }
            ImpulseSize::OneSdAlone => {
                vector[k] = sd;
                sd
            }
            ImpulseSize::OneSd => {
                if sd > 0.0 {
                    for i in 0..ne {
                        vector[i] = if i == k { sd } else { sigma(i, k) / sd };
                    }
                }
                sd
            }
        };
        let mut out = DMatrix::<f64>::zeros(nv, horizon + 1);
        out.column_mut(0).copy_from(&(&space.q * &vector));
        let mut s: DVector<f64> = &space.h * &vector;
        for h in 1..=horizon {
            out.column_mut(h).copy_from(&(&space.p * &s));
            s = &space.g * &s;
        }
        responses.push(out);
        impulse.push(amount);
        vectors.push(vector);
        names.push(solved.shocks[k].clone());
    }
    Ok(ImpulseResponses {
        horizon,
        size,
        shocks: names,
        variables: solved.variables.clone(),
        responses,
        impulse,
        impulse_vectors: vectors,
        innovations: solved.shocks.clone(),
    })
}

impl ImpulseResponses {
    /// The responses of the variables at `rows` (indices into `variables`, in the order given)
    /// only; every shock is kept. Indices out of range are skipped. Returns the selection.
    pub fn select(&self, rows: &[usize]) -> ImpulseResponses {
        let rows: Vec<usize> = rows
            .iter()
            .copied()
            .filter(|&r| r < self.variables.len())
            .collect();
        ImpulseResponses {
            variables: rows.iter().map(|&r| self.variables[r].clone()).collect(),
            responses: self
                .responses
                .iter()
                .map(|m| DMatrix::from_fn(rows.len(), m.ncols(), |i, h| m[(rows[i], h)]))
                .collect(),
            ..self.clone()
        }
    }
}
