//! Theoretical moments of the solved model
//!
//! ```text
//!     y_t - ybar = P s_{t-1} + Q e_t,     s_t = G s_{t-1} + H e_t,     e_t ~ iid (0, Sigma)
//! ```
//!
//! * Var(s) = X solves X = G X G' + H Sigma H' (discrete Lyapunov, [`crate::linalg::lyapunov`]);
//!   Var(y) = P X P' + Q Sigma Q' (s_{t-1} is independent of e_t).
//! * Cov(y_t, y_{t-k}) = P G^k X P' + P G^{k-1} H Sigma Q' for k >= 1; the autocorrelation of
//!   variable i at lag k is its diagonal entry over Var(y_i).
//! * Variance decomposition by innovation: with Sigma = L L' (Cholesky, innovations in declaration
//!   order), innovation j contributes the variance of the system driven by column l_j alone,
//!   X_j = G X_j G' + H l_j l_j' H' and V_j = P X_j P' + Q l_j l_j' Q'; the V_j add up to Var(y).
//!   With uncorrelated innovations L is diagonal and this is the plain split; with correlated ones
//!   the common part is attributed to the innovation declared first (a convention, stated in the
//!   warnings).
//! * Forecast-error variance decomposition at horizon h: the h-step forecast error of y is
//!   sum_{k=0}^{h-1} Psi_k e_{t+h-k} with Psi_0 = Q, Psi_k = P G^{k-1} H; innovation j's share is
//!   sum_k (Psi_k l_j)_i^2 over the sum across j. As h grows it tends to the unconditional split.
//!
//! Unit and explosive roots: the work is done in the complex Schur basis of G, reordered so that
//! the modes with |lambda| < 1 - [`UNIT_ROOT_TOL`] come first, and the two blocks decoupled by a
//! triangular Sylvester solve. A variable whose variance does not exist is one that loads on the
//! other modes through a direction the innovations reach (a Krylov test); it is named in
//! [`Moments::nonstationary`], and every other variable gets its moments from the stable block.

use nalgebra::DMatrix;
use thiserror::Error;

use crate::linalg::{
    cmul, doubling, frobenius_c, relative_residual, semidefinite_factor,
    solve_quasi_triangular_stein, solve_sylvester_upper, solve_triangular_stein, to_complex,
    ComplexSchur, FactorError, LyapunovError, LyapunovMethod, LyapunovParams, RealSchur, C64,
};
use crate::solution::{SolvedModel, StateSpace, Status};

/// Modes with |lambda| >= 1 - UNIT_ROOT_TOL are treated as unit or explosive roots. The solver
/// classifies roots against the threshold with a 1e-6 relative boundary tolerance, and a double
/// unit root computed in floating point is perturbed by about sqrt(eps) ||G|| = 1.5e-8 ||G||; 1e-6
/// covers both with a margin, at the price of calling a root of 0.9999995 a unit root (its
/// variance would be a million times the innovation's, which nobody reads as stationary).
pub const UNIT_ROOT_TOL: f64 = 1e-6;

/// A variable loads on the non-stationary modes when some entry of its response along them
/// exceeds this multiple of the norms involved. Exact zeros become about eps * (size of the
/// Sylvester coupling) after the change of basis; 1e-9 sits far above that and far below any
/// loading a model means to have.
pub const LOADING_TOL: f64 = 1e-9;

/// A variance at or below this multiple of the largest variance counts as zero: rounding leaves
/// about eps^2 relative on a variance that should vanish, so std ratios below 1e-12 are noise.
pub const ZERO_VARIANCE_RELTOL: f64 = 1e-24;

/// Cholesky pivots whose magnitude is at most this multiple of the largest diagonal entry of the
/// covariance count as zero (a degenerate innovation, or one that is an exact combination of
/// those before it): 1e-12 is about 4500 eps, room for the rounding of a covariance built from
/// standard deviations and correlations.
pub const PIVOT_TOL: f64 = 1e-12;

/// A variance share below this is rounding noise of an exact zero and is printed as 0: the
/// parts come from sums of products of order one relative to the total, so an exact zero
/// comes out at a few eps; 64 eps leaves margin and is far below any share worth reading.
pub const SHARE_NOISE: f64 = 64.0 * f64::EPSILON;

/// Largest autocorrelation lag accepted.
pub const MAX_LAGS: usize = 10_000;
/// Largest FEVD horizon accepted.
pub const MAX_HORIZON: usize = 100_000;

/// Why the covariance of the innovations could not be factored.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum CovarianceError {
    #[error("the innovation covariance is {rows}x{cols}, but the model has {shocks} innovations")]
    Shape {
        rows: usize,
        cols: usize,
        shocks: usize,
    },
    #[error("the innovation covariance has a non-finite entry for `{shock}`")]
    NonFinite { shock: String },
    #[error("the innovation covariance is not symmetric: the entries for `{first}` and `{second}` differ")]
    NotSymmetric { first: String, second: String },
    #[error("the innovation covariance is not positive semidefinite: given the innovations declared before it, `{shock}` would have variance {pivot:e} (check its sd/var and the corr() entries that involve it)")]
    NotPositiveSemidefinite { shock: String, pivot: f64 },
}

/// Why moments could not be computed.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum MomentsError {
    #[error("the model has no unique stable solution (status {status}); moments need one")]
    NotDeterminate { status: &'static str },
    #[error("the solution matrices have inconsistent sizes: {0}")]
    Shape(Shapes),
    #[error("the solution matrices have a non-finite entry")]
    NonFinite,
    #[error(transparent)]
    Covariance(#[from] CovarianceError),
    #[error(transparent)]
    Lyapunov(#[from] LyapunovError),
    #[error("the Lyapunov solve of the stable block left a relative residual {residual:e} above the tolerance {tolerance:e} (doubling does not apply: the transition matrix has unit or explosive roots)")]
    StableBlockResidual { residual: f64, tolerance: f64 },
    #[error("the stable and the unit or explosive modes of the transition matrix are too close to be separated (eigenvalue gap {gap:e})")]
    Inseparable { gap: f64 },
    #[error("at most {MAX_LAGS} autocorrelation lags, got {0}")]
    TooManyLags(usize),
    #[error("forecast-error horizons must be between 1 and {MAX_HORIZON}, got {0}")]
    BadHorizon(usize),
}

/// The sizes of a solution's lists and matrices (rows, columns), as found when they disagree.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Shapes {
    pub variables: usize,
    pub innovations: usize,
    pub p: (usize, usize),
    pub q: (usize, usize),
    pub g: (usize, usize),
    pub h: (usize, usize),
    pub covariance: (usize, usize),
}

impl std::fmt::Display for Shapes {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        let m = |(r, c): (usize, usize)| format!("{r}x{c}");
        write!(
            f,
            "{} variables, {} innovations, P {}, Q {}, G {}, H {}, covariance {}",
            self.variables,
            self.innovations,
            m(self.p),
            m(self.q),
            m(self.g),
            m(self.h),
            m(self.covariance)
        )
    }
}

/// Everything `saddle moments` reports. Deviations are log deviations for `log` variables.
#[derive(Debug, Clone, PartialEq)]
pub struct Moments {
    pub variables: Vec<String>,
    pub shocks: Vec<String>,
    /// `None` where the variance does not exist.
    pub std: Vec<Option<f64>>,
    /// Var(y); NaN in the rows and columns of non-stationary variables.
    pub covariance: DMatrix<f64>,
    /// NaN where undefined (a non-stationary or zero-variance variable).
    pub correlation: DMatrix<f64>,
    /// Per variable, lags 1..=L (NaN where undefined).
    pub autocorrelation: Vec<Vec<f64>>,
    /// Per variable, per shock: shares of the unconditional variance (NaN where undefined).
    pub variance_decomposition: Vec<Vec<f64>>,
    /// Per horizon: per variable, per shock shares of the forecast-error variance.
    pub fevd: Vec<(usize, Vec<Vec<f64>>)>,
    /// Variables whose unconditional variance does not exist.
    pub nonstationary: Vec<String>,
    /// Sentences for a person (attribution convention, unit roots...).
    pub warnings: Vec<String>,
    /// Relative residual of the Lyapunov solve of the stable block.
    pub lyapunov_residual: f64,
    /// Which algorithm solved it: the Schur route, or doubling when that failed.
    pub lyapunov_method: LyapunovMethod,
}

/// The lower-triangular factor L with L L' = `cov` (Cholesky, innovations in declaration order),
/// allowing zero pivots (a degenerate innovation gets a zero column). Reads only; returns L, or an
/// error naming the innovation whose conditional variance is negative.
pub fn covariance_factor(
    cov: &DMatrix<f64>,
    shocks: &[String],
) -> Result<DMatrix<f64>, CovarianceError> {
    let n = shocks.len();
    if cov.nrows() != n || cov.ncols() != n {
        return Err(CovarianceError::Shape {
            rows: cov.nrows(),
            cols: cov.ncols(),
            shocks: n,
        });
    }
    semidefinite_factor(cov, PIVOT_TOL).map_err(|e| match e {
        FactorError::Shape { rows, cols } => CovarianceError::Shape {
            rows,
            cols,
            shocks: n,
        },
        FactorError::NonFinite { row } => CovarianceError::NonFinite {
            shock: shocks[row].clone(),
        },
        FactorError::NotSymmetric { first, second } => CovarianceError::NotSymmetric {
            first: shocks[first].clone(),
            second: shocks[second].clone(),
        },
        FactorError::NotPositiveSemidefinite { index, pivot } => {
            CovarianceError::NotPositiveSemidefinite {
                shock: shocks[index].clone(),
                pivot,
            }
        }
    })
}

/// Checks that the state space's matrices agree with each other and with the model's lists.
pub fn check_shapes(solved: &SolvedModel, ss: &StateSpace) -> Result<(), MomentsError> {
    let ny = solved.variables.len();
    let ne = solved.shocks.len();
    let ns = ss.g.nrows();
    let ok = ss.g.ncols() == ns
        && ss.p.nrows() == ny
        && ss.p.ncols() == ns
        && ss.q.nrows() == ny
        && ss.q.ncols() == ne
        && ss.h.nrows() == ns
        && ss.h.ncols() == ne
        && solved.covariance.nrows() == ne
        && solved.covariance.ncols() == ne;
    if !ok {
        return Err(MomentsError::Shape(Shapes {
            variables: ny,
            innovations: ne,
            p: ss.p.shape(),
            q: ss.q.shape(),
            g: ss.g.shape(),
            h: ss.h.shape(),
            covariance: solved.covariance.shape(),
        }));
    }
    if [&ss.p, &ss.q, &ss.g, &ss.h]
        .iter()
        .any(|m| m.iter().any(|v| !v.is_finite()))
    {
        return Err(MomentsError::NonFinite);
    }
    Ok(())
}

/// Computes every moment of [`Moments`] from a determinate solution (reads only). `lags` is the
/// largest autocorrelation lag, `horizons` the FEVD horizons (each at least 1). The Lyapunov
/// solves use the default [`LyapunovParams`]; see [`moments_with`].
pub fn moments(
    solved: &SolvedModel,
    lags: usize,
    horizons: &[usize],
) -> Result<Moments, MomentsError> {
    moments_with(solved, lags, horizons, &LyapunovParams::default())
}

/// As [`moments`], with the Lyapunov solver's tuning `params`. When every mode is stable and the
/// Schur route fails (the QR iteration exceeds its sweep budget, or the residual is above
/// `params.residual_tol`), the covariances come from doubling instead, checked by the same
/// residual test ([`Moments::lyapunov_method`] says which ran).
pub fn moments_with(
    solved: &SolvedModel,
    lags: usize,
    horizons: &[usize],
    params: &LyapunovParams,
) -> Result<Moments, MomentsError> {
    params.validate()?;
    let ss = match (&solved.solution, solved.status) {
        (Some(ss), Status::Determinate) => ss,
        _ => {
            return Err(MomentsError::NotDeterminate {
                status: solved.status.as_str(),
            })
        }
    };
    if lags > MAX_LAGS {
        return Err(MomentsError::TooManyLags(lags));
    }
    if let Some(&h) = horizons.iter().find(|&&h| h == 0 || h > MAX_HORIZON) {
        return Err(MomentsError::BadHorizon(h));
    }
    check_shapes(solved, ss)?;
    let ny = solved.variables.len();
    let ne = solved.shocks.len();
    let l = covariance_factor(&solved.covariance, &solved.shocks)?;
    let mut warnings = Vec::new();
    let correlated = (0..ne).any(|i| (0..i).any(|j| solved.covariance[(i, j)] != 0.0));
    if correlated {
        warnings.push(format!(
            "the innovations are correlated: the variance decompositions attribute their common \
             part by a Cholesky factorization in declaration order ({}), so an innovation declared \
             earlier gets the shared variance",
            solved.shocks.join(", ")
        ));
    }

    let sigma = &solved.covariance;
    let core = match RealSchur::with_sweeps(&ss.g, params.schur_sweeps_per_dim) {
        Ok(real) if real.spectral_radius() < 1.0 - UNIT_ROOT_TOL => {
            match core_stationary(ss, sigma, &l, &real, lags, params.residual_tol)? {
                Ok(core) => core,
                Err(schur_residual) => core_doubling(ss, sigma, &l, lags, params, schur_residual)?,
            }
        }
        Ok(_) => core_with_unit_roots(solved, ss, &l, lags, params.residual_tol)?,
        // Without a Schur form the spectral radius is unknown: doubling diverges on an unstable
        // G, which its residual test then reports.
        Err(LyapunovError::SchurNoConvergence) => {
            core_doubling(ss, sigma, &l, lags, params, f64::INFINITY)?
        }
        Err(e) => return Err(e.into()),
    };
    let Core {
        stationary,
        part,
        var_full,
        autocov,
        residual: lyapunov_residual,
        warnings: more,
        method: lyapunov_method,
    } = core;
    warnings.extend(more);

    let mut covariance = var_full;
    for i in 0..ny {
        if !stationary[i] {
            for k in 0..ny {
                covariance[(i, k)] = f64::NAN;
                covariance[(k, i)] = f64::NAN;
            }
        }
    }
    let max_var = (0..ny)
        .filter(|&i| stationary[i])
        .map(|i| covariance[(i, i)])
        .fold(0.0, f64::max);
    let positive: Vec<bool> = (0..ny)
        .map(|i| stationary[i] && covariance[(i, i)] > ZERO_VARIANCE_RELTOL * max_var)
        .collect();
    let std: Vec<Option<f64>> = (0..ny)
        .map(|i| stationary[i].then(|| covariance[(i, i)].max(0.0).sqrt()))
        .collect();
    let correlation = DMatrix::from_fn(ny, ny, |i, k| {
        if positive[i] && positive[k] {
            if i == k {
                1.0
            } else {
                (covariance[(i, k)] / (covariance[(i, i)] * covariance[(k, k)]).sqrt())
                    .clamp(-1.0, 1.0)
            }
        } else {
            f64::NAN
        }
    });
    let autocorrelation: Vec<Vec<f64>> = (0..ny)
        .map(|i| {
            autocov[i]
                .iter()
                .map(|c| {
                    if positive[i] {
                        c / covariance[(i, i)]
                    } else {
                        f64::NAN
                    }
                })
                .collect()
        })
        .collect();

    let variance_decomposition: Vec<Vec<f64>> = (0..ny)
        .map(|i| {
            let total: f64 = part.row(i).iter().sum();
            (0..ne)
                .map(|j| {
                    if positive[i] && total > 0.0 {
                        let share = part[(i, j)] / total;
                        if share < SHARE_NOISE {
                            0.0
                        } else {
                            share
                        }
                    } else {
                        f64::NAN
                    }
                })
                .collect()
        })
        .collect();

    let fevd = forecast_error_decomposition(ss, &l, horizons);
    let nonstationary = (0..ny)
        .filter(|&i| !stationary[i])
        .map(|i| solved.variables[i].clone())
        .collect();
    Ok(Moments {
        variables: solved.variables.clone(),
        shocks: solved.shocks.clone(),
        std,
        covariance,
        correlation,
        autocorrelation,
        variance_decomposition,
        fevd,
        nonstationary,
        warnings,
        lyapunov_residual,
        lyapunov_method,
    })
}

/// What either computation path delivers to [`moments`].
struct Core {
    /// Per variable: its unconditional variance exists.
    stationary: Vec<bool>,
    /// Variance of variable i due to innovation j (orthogonalized by L), ny x ne.
    part: DMatrix<f64>,
    /// Var(y) (meaningful in the rows and columns of stationary variables).
    var_full: DMatrix<f64>,
    /// Per variable, autocovariances at lags 1..=L.
    autocov: Vec<Vec<f64>>,
    residual: f64,
    warnings: Vec<String>,
    method: LyapunovMethod,
}

/// Every mode stable, in an orthogonal basis s = U w with w_t = T w_{t-1} + U'H e_t (T = U'G U):
/// per innovation Y_j = T Y_j T' + b_j b_j' with b_j = U'H l_j, solved by `solve(T, C)`;
/// Var_j(y_i) = (P U Y_j U' P')_ii + (Q l_j)_i^2; the sum Y is checked by [`relative_residual`];
/// autocovariances from S_1 = T Y U'P' + (U'H L) L'Q', S_k = T S_{k-1}, diag(P U S_k). Reads
/// only. Returns the core, or `Ok(Err(residual))` when the residual exceeds `tol`.
#[allow(clippy::too_many_arguments)]
fn core_in_basis(
    ss: &StateSpace,
    sigma: &DMatrix<f64>,
    l: &DMatrix<f64>,
    (u, t): (&DMatrix<f64>, &DMatrix<f64>),
    lags: usize,
    tol: f64,
    method: LyapunovMethod,
    mut solve: impl FnMut(&DMatrix<f64>, &DMatrix<f64>) -> Result<DMatrix<f64>, MomentsError>,
) -> Result<Result<Core, f64>, MomentsError> {
    let ny = ss.p.nrows();
    let ne = l.ncols();
    let ns = ss.g.nrows();
    let pu = &ss.p * u; // ny x ns
    let uhl = u.transpose() * (&ss.h * l); // ns x ne
    let ql = &ss.q * l;
    let mut part = DMatrix::<f64>::zeros(ny, ne);
    let mut y_total = DMatrix::<f64>::zeros(ns, ns);
    for j in 0..ne {
        let b = uhl.column(j);
        let yj = solve(t, &(b * b.transpose()))?;
        let py = &pu * &yj;
        for i in 0..ny {
            let s = py.row(i).dot(&pu.row(i));
            part[(i, j)] = s.max(0.0) + ql[(i, j)] * ql[(i, j)];
        }
        y_total += yj;
    }
    let y_total = (&y_total + y_total.transpose()) * 0.5;
    let residual = relative_residual(t, &(&uhl * uhl.transpose()), &y_total);
    if !(residual <= tol) {
        return Ok(Err(residual));
    }
    let v = &pu * &y_total * pu.transpose() + &ss.q * sigma * ss.q.transpose();
    let var_full = (&v + v.transpose()) * 0.5;
    let mut autocov = vec![Vec::with_capacity(lags); ny];
    if lags > 0 {
        let mut s = t * (&y_total * pu.transpose()) + &uhl * (l.transpose() * ss.q.transpose());
        for _ in 1..=lags {
            for (i, a) in autocov.iter_mut().enumerate() {
                a.push(pu.row(i).dot(&s.column(i).transpose()));
            }
            s = t * &s;
        }
    }
    Ok(Ok(Core {
        stationary: vec![true; ny],
        part,
        var_full,
        autocov,
        residual,
        warnings: Vec::new(),
        method,
    }))
}

/// [`core_in_basis`] in the real Schur basis G = U T U', each Y_j by the quasi-triangular solve.
fn core_stationary(
    ss: &StateSpace,
    sigma: &DMatrix<f64>,
    l: &DMatrix<f64>,
    schur: &RealSchur,
    lags: usize,
    tol: f64,
) -> Result<Result<Core, f64>, MomentsError> {
    let basis = (&schur.q, &schur.t);
    core_in_basis(
        ss,
        sigma,
        l,
        basis,
        lags,
        tol,
        LyapunovMethod::Schur,
        |t, c| Ok(solve_quasi_triangular_stein(t, &schur.blocks, c)?),
    )
}

/// The doubling fallback of [`moments_with`]: [`core_in_basis`] in the original basis (U = I,
/// T = G), each Y_j by doubling. Returns the core, or [`LyapunovError::NoConvergence`] with the
/// Schur route's residual (infinite when it produced none) and doubling's.
fn core_doubling(
    ss: &StateSpace,
    sigma: &DMatrix<f64>,
    l: &DMatrix<f64>,
    lags: usize,
    params: &LyapunovParams,
    schur_residual: f64,
) -> Result<Core, MomentsError> {
    let identity = DMatrix::<f64>::identity(ss.g.nrows(), ss.g.nrows());
    let mut steps = 0;
    let basis = (&identity, &ss.g);
    let tol = params.residual_tol;
    let core = core_in_basis(
        ss,
        sigma,
        l,
        basis,
        lags,
        tol,
        LyapunovMethod::Doubling,
        |g, c| {
            let (x, taken) = doubling(g, c, params.max_doubling_steps);
            steps = steps.max(taken);
            Ok(x)
        },
    )?;
    core.map_err(|doubling_residual| {
        MomentsError::Lyapunov(LyapunovError::NoConvergence {
            schur_residual,
            doubling_residual,
            steps,
            tolerance: tol,
        })
    })
}

/// Some mode with |lambda| >= 1 - UNIT_ROOT_TOL: complex Schur basis reordered with the stable
/// modes first, blocks decoupled by a Sylvester solve, non-stationary variables found by a Krylov
/// test, and the moments of the rest computed from the stable block. Reads only.
fn core_with_unit_roots(
    solved: &SolvedModel,
    ss: &StateSpace,
    l: &DMatrix<f64>,
    lags: usize,
    tol: f64,
) -> Result<Core, MomentsError> {
    let ny = solved.variables.len();
    let ne = solved.shocks.len();
    let ns = ss.g.nrows();
    let mut warnings = Vec::new();
    // Complex Schur basis of G with the stable modes first.
    let mut schur = ComplexSchur::new(&ss.g)?;
    let n1 = schur.reorder_front(|z| z.norm() < 1.0 - UNIT_ROOT_TOL);
    let n2 = ns - n1;
    let t11 = schur.t.view((0, 0), (n1, n1)).into_owned();
    let t12 = schur.t.view((0, n1), (n1, n2)).into_owned();
    let t22 = schur.t.view((n1, n1), (n2, n2)).into_owned();
    let z = solve_sylvester_upper(&t11, &t22, &(-t12))
        .map_err(|e| MomentsError::Inseparable { gap: e.gap })?;
    let pc = to_complex(&ss.p);
    let hl = &ss.h * l;
    let hlc = to_complex(&hl);
    let pu = cmul(&pc, &schur.u);
    let uhl = cmul(&schur.u.adjoint(), &hlc);
    let c1 = pu.columns(0, n1).into_owned();
    let b2 = uhl.rows(n1, n2).into_owned();
    let b1 = uhl.rows(0, n1).into_owned() - cmul(&z, &b2);

    // Which variables load on the non-stationary modes through directions the shocks reach.
    let mut stationary = vec![true; ny];
    if n2 > 0 {
        let c2 = cmul(&c1, &z) + pu.columns(n1, n2);
        let c2norm = frobenius_c(&c2);
        let mut r = b2.clone();
        for _ in 0..n2 {
            let rn = frobenius_c(&r);
            if rn == 0.0 || !rn.is_finite() {
                break;
            }
            r /= C64::new(rn, 0.0);
            let m = cmul(&c2, &r);
            for (i, st) in stationary.iter_mut().enumerate() {
                if m.row(i).iter().any(|v| v.norm() > LOADING_TOL * c2norm) {
                    *st = false;
                }
            }
            r = cmul(&t22, &r);
        }
        let unit: Vec<String> = schur.eigenvalues()[n1..]
            .iter()
            .map(|z| format!("{:.6}", z.norm()))
            .collect();
        let names: Vec<String> = (0..ny)
            .filter(|&i| !stationary[i])
            .map(|i| solved.variables[i].clone())
            .collect();
        if names.is_empty() {
            warnings.push(format!(
                "the transition matrix has {n2} root(s) of modulus {} (unit or explosive), but no \
                 variable loads on them through a direction the innovations reach; all moments exist",
                unit.join(", ")
            ));
        } else {
            warnings.push(format!(
                "the transition matrix has {n2} root(s) of modulus {} (unit or explosive): the \
                 unconditional variance of {} does not exist; the moments of the other variables \
                 are reported",
                unit.join(", "),
                names.join(", ")
            ));
        }
    }

    // Per-innovation stable-block covariances Y_j = T11 Y_j T11^H + b_j b_j^H.
    let qc = to_complex(&ss.q);
    let ql = &ss.q * l;
    let mut y_total = DMatrix::<C64>::zeros(n1, n1);
    let mut c_total = DMatrix::<C64>::zeros(n1, n1);
    let mut part = DMatrix::<f64>::zeros(ny, ne); // variance of y_i due to innovation j
    for j in 0..ne {
        let b = b1.column(j).into_owned();
        let cj = &b * b.adjoint();
        let yj = solve_triangular_stein(&t11, &cj)?;
        let cy = cmul(&c1, &yj);
        for i in 0..ny {
            let mut s = 0.0;
            for a in 0..n1 {
                s += (cy[(i, a)] * c1[(i, a)].conj()).re;
            }
            part[(i, j)] = s.max(0.0) + ql[(i, j)] * ql[(i, j)];
        }
        y_total += yj;
        c_total += cj;
    }
    let lyapunov_residual = {
        let r = &y_total - cmul(&cmul(&t11, &y_total), &t11.adjoint()) - &c_total;
        let denom = frobenius_c(&c_total) + frobenius_c(&t11).powi(2) * frobenius_c(&y_total);
        if denom == 0.0 {
            0.0
        } else {
            frobenius_c(&r) / denom
        }
    };
    if !(lyapunov_residual <= tol) {
        return Err(MomentsError::StableBlockResidual {
            residual: lyapunov_residual,
            tolerance: tol,
        });
    }
    let sigma = &solved.covariance;
    let var_full = {
        let v = cmul(&cmul(&c1, &y_total), &c1.adjoint()).map(|z| z.re)
            + &ss.q * sigma * ss.q.transpose();
        (&v + v.transpose()) * 0.5
    };
    // Autocovariances: S_1 = T11 Y C1^H + B1 Sigma_v Q', S_k = T11 S_{k-1}; diag(C1 S_k).
    let mut autocov = vec![Vec::with_capacity(lags); ny];
    if lags > 0 {
        // With e = L u (Var u = I), E[v1_{t-1} e_{t-k}'] = T11^{k-1} B1 L' for k >= 1.
        let lt = to_complex(&l.transpose());
        let mut s =
            cmul(&t11, &cmul(&y_total, &c1.adjoint())) + cmul(&cmul(&b1, &lt), &qc.transpose());
        for _ in 1..=lags {
            for i in 0..ny {
                let mut acc = 0.0;
                for a in 0..n1 {
                    acc += (c1[(i, a)] * s[(a, i)]).re;
                }
                autocov[i].push(acc);
            }
            s = cmul(&t11, &s);
        }
    }

    Ok(Core {
        stationary,
        part,
        var_full,
        autocov,
        residual: lyapunov_residual,
        warnings,
        method: LyapunovMethod::Schur,
    })
}

/// Forecast-error variance shares at each horizon in `horizons` (each >= 1), per variable and
/// innovation: sum_{k<h} (Psi_k l_j)_i^2 normalized across j, with Psi_0 = Q and
/// Psi_k = P G^{k-1} H. Exists at every finite horizon, even for non-stationary variables. Reads
/// only; a variable with zero forecast-error variance gets NaN shares.
pub fn forecast_error_decomposition(
    ss: &StateSpace,
    l: &DMatrix<f64>,
    horizons: &[usize],
) -> Vec<(usize, Vec<Vec<f64>>)> {
    let ny = ss.p.nrows();
    let ne = l.ncols();
    let max_h = horizons.iter().copied().max().unwrap_or(0);
    let mut cum = DMatrix::<f64>::zeros(ny, ne);
    let mut at = std::collections::BTreeMap::new();
    let mut r = &ss.h * l; // G^{k-1} H L
    let psi0 = &ss.q * l;
    for h in 1..=max_h {
        let psi = if h == 1 {
            psi0.clone()
        } else {
            let p = &ss.p * &r;
            r = &ss.g * &r;
            p
        };
        cum += psi.component_mul(&psi);
        if horizons.contains(&h) {
            let shares: Vec<Vec<f64>> = (0..ny)
                .map(|i| {
                    let total: f64 = cum.row(i).iter().sum();
                    (0..ne)
                        .map(|j| {
                            if total > 0.0 && total.is_finite() {
                                cum[(i, j)] / total
                            } else {
                                f64::NAN
                            }
                        })
                        .collect()
                })
                .collect();
            at.insert(h, shares);
        }
    }
    horizons
        .iter()
        .filter_map(|h| at.get(h).map(|s| (*h, s.clone())))
        .collect()
}

impl Moments {
    /// The moments of the variables at `rows` (indices into `variables`, in the order given)
    /// only: their standard deviations, covariances and correlations among themselves,
    /// autocorrelations and variance shares. Indices out of range are skipped. Returns the
    /// selection.
    pub fn select(&self, rows: &[usize]) -> Moments {
        let rows: Vec<usize> = rows
            .iter()
            .copied()
            .filter(|&r| r < self.variables.len())
            .collect();
        let pick = |m: &DMatrix<f64>| {
            DMatrix::from_fn(rows.len(), rows.len(), |i, j| m[(rows[i], rows[j])])
        };
        let per = |v: &Vec<Vec<f64>>| rows.iter().map(|&r| v[r].clone()).collect::<Vec<_>>();
        let variables: Vec<String> = rows.iter().map(|&r| self.variables[r].clone()).collect();
        Moments {
            std: rows.iter().map(|&r| self.std[r]).collect(),
            covariance: pick(&self.covariance),
            correlation: pick(&self.correlation),
            autocorrelation: per(&self.autocorrelation),
            variance_decomposition: per(&self.variance_decomposition),
            fevd: self.fevd.iter().map(|(h, v)| (*h, per(v))).collect(),
            nonstationary: self
                .nonstationary
                .iter()
                .filter(|n| variables.contains(n))
                .cloned()
                .collect(),
            variables,
            ..self.clone()
        }
    }
}
