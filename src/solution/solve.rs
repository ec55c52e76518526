//! From a checked model to its solution: the whole pipeline, phase by phase.
//!
//! Contract: [`PreparedModel::new`] does everything that depends only on the model's structure
//! (exact derivatives compiled to tapes, the layout of the canonical form); [`PreparedModel::solve`]
//! takes a model of that structure (possibly other parameter values) through steady state,
//! linearization, canonical form, QZ, the counting and rank conditions and, when they hold, the
//! decision rule y_t - ybar = P s_{t-1} + Q e_t, s_t = G s_{t-1} + H e_t, which it plugs back into
//! the linearized equations (residual below [`PLUG_BACK_TOL`]).
//!
//! The solution formulas (Klein 2000, JEDC 24, section 4, adapted to innovations dated t): with
//! Q^H B Z = S, Q^H A Z = T, the stable roots ordered first (n_s of them) and w = Z^H z,
//! the unstable block gives w2_t = M2 e_t with M2 = -S22^{-1} (Q^H C)_2, and with
//! W = Z_k1^{-1} (square and invertible exactly when the counting and rank conditions hold)
//!
//! ```text
//!   x_t     = Z_x1 W k_t + (Z_x2 - Z_x1 W Z_k2) M2 e_t
//!   k_{t+1} = Z_k1 T11^{-1} S11 W k_t
//!           + Z_k1 T11^{-1} (S12 M2 + (Q^H C)_1 - S11 W Z_k2 M2) e_t.
//! ```

use std::time::{Duration, Instant};

use nalgebra::DMatrix;

use super::diagnosis;
use super::{Counts, Root, SolvedModel, StateSpace, Status};
use crate::canonical::{
    build_pencil, CanonicalError, Layout, Pencil, StateElement, StaticTreatment,
};
use crate::linalg::{cmul, spectral_norm_estimate, to_complex};
use crate::linear::balance::{scaled, Scaling};
use crate::linear::{linearize, LinearError, LinearSystem};
use crate::model::{timing, Model};
use crate::qz::{root_position, GeneralizedSchur, QzError, RootPosition, C64};
use crate::steady::{solve_steady, SteadyError};
use crate::symbolic::CompiledModel;

/// A root within this relative distance of the threshold is "on the boundary" (spec §7).
pub const BOUNDARY_TOL: f64 = 1e-6;
/// A root with modulus above this is reported as infinite: |alpha| > INFINITE_MODULUS |beta|.
/// (A static equation gives beta of the order of machine epsilon times |A|, that is a modulus
/// near 1e15 or more; genuine finite roots of economic models are many orders below 1e10.)
pub const INFINITE_MODULUS: f64 = 1e10;
/// Smallest singular value of Z_k1 (whose singular values are at most 1, Z being unitary) below
/// which the stable roots do not determine the forward-looking block: the rank condition fails.
pub const RANK_TOL: f64 = 1e-10;
/// Largest residual (relative to the size of the terms of each equation) the solution may leave in
/// the linearized equations (issue 4).
pub const PLUG_BACK_TOL: f64 = 1e-10;
/// Relative size below which a computed quantity is rounding noise of an exact zero (about 4500
/// machine epsilons: the backward error of a QZ-based solution is a modest multiple of epsilon
/// times the pencil's norm, amplified by the condition of the blocks that are inverted).
pub const ROUND_OFF: f64 = 1e-12;
/// Entries of [P Q] and [G H] below this times the block's largest entry are set to exactly zero
/// (64 machine epsilons: far below any meaningful coefficient, and it makes responses that are
/// zero in exact arithmetic print as zero).
pub const CLEAN_TOL: f64 = 64.0 * f64::EPSILON;
/// Largest number of equations solved (the steady-state Newton and the canonical form use dense
/// matrices: 4000^2 doubles are 128 MB each).
pub const MAX_EQUATIONS: usize = 4000;
/// Largest pencil dimension handed to the QZ (complex 2000 x 2000 factors are 64 MB each, four
/// of them, and the QZ's cubic cost is minutes beyond that on the project's machine).
pub const MAX_PENCIL_DIM: usize = 2000;
/// Imaginary parts of the solution matrices above this (relative) mean the stable subspace was not
/// closed under conjugation: a warning.
pub const IMAGINARY_TOL: f64 = 1e-8;

/// Where the stable-root threshold comes from.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum ThresholdSetting {
    /// The model's `options` (`threshold`, else `discount` as 1/sqrt(discount)), else 1.
    FromModel,
    /// Threshold 1/sqrt(discount).
    Discount(f64),
    /// This threshold.
    Explicit(f64),
}

/// Options of one solve.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SolveOptions {
    pub threshold: ThresholdSetting,
    /// Roots on the boundary count as stable (spec §7 default).
    pub boundary_stable: bool,
}

impl Default for SolveOptions {
    fn default() -> Self {
        SolveOptions {
            threshold: ThresholdSetting::FromModel,
            boundary_stable: true,
        }
    }
}

/// Wall time of each phase.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Timings {
    pub derivatives: Duration,
    pub steady_state: Duration,
    pub linearization: Duration,
    pub canonical_form: Duration,
    pub qz: Duration,
    pub solution: Duration,
}

impl Timings {
    /// Sum of the phases.
    pub fn total(&self) -> Duration {
        self.derivatives
            + self.steady_state
            + self.linearization
            + self.canonical_form
            + self.qz
            + self.solution
    }

    /// One line per phase, like `qz             0.412 ms`.
    pub fn report(&self) -> String {
        let rows = [
            ("derivatives", self.derivatives),
            ("steady state", self.steady_state),
            ("linearization", self.linearization),
            ("canonical form", self.canonical_form),
            ("qz", self.qz),
            ("solution", self.solution),
            ("total", self.total()),
        ];
        rows.iter()
            .map(|(name, d)| format!("{name:<15} {:>10.3} ms", d.as_secs_f64() * 1e3))
            .collect::<Vec<_>>()
            .join("\n")
    }
}

/// Why a model could not be solved (distinct from a solved model without a unique stable
/// solution, which is a [`SolvedModel`] with a diagnosis).
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum SolveError {
    #[error("steady state not found: {0}")]
    SteadyState(#[from] SteadyError),
    #[error("linearization failed: {0}")]
    Linearization(#[from] LinearError),
    #[error("{0}")]
    Canonical(#[from] CanonicalError),
    #[error(
        "parameter {name} is {value} at this calibration; every parameter must be a finite number"
    )]
    NonFiniteParameter { name: String, value: f64 },
    #[error(
        "the stable-root threshold is {value} ({source_desc}); it must be a positive finite number"
    )]
    BadThreshold { value: f64, source_desc: String },
    #[error("the model given to solve does not have the structure that was prepared ({0}); prepare it again")]
    StructureMismatch(String),
    #[error("the linearized system is singular: det(B - zA) vanishes for every z, so the equations do not determine the variables (an equation may repeat another, or a variable may drop out at the steady state). Check the equations that involve {}", absent_text(.absent))]
    SingularPencil {
        /// The variables no equation depends on at the steady state (the usual culprits); empty
        /// when none stands out.
        absent: Vec<String>,
    },
    #[error("{what} is {size}, above saddle's limit of {limit} for its dense solver")]
    TooLarge {
        what: &'static str,
        size: usize,
        limit: usize,
    },
    #[error("the QZ decomposition failed: {0}")]
    Qz(QzError),
    #[error("the solution could not be computed: {0}")]
    Numerical(NumericalFailure),
}

/// The wording of [`SolveError::SingularPencil`]'s variables.
fn absent_text(absent: &[String]) -> String {
    if absent.is_empty() {
        "every variable (no single one stands out)".to_string()
    } else {
        format!(
            "{} (no equation depends on it at the steady state)",
            absent.join(", ")
        )
    }
}

/// Which step of the decision-rule formulas failed (module doc).
#[derive(Debug, Clone, Copy, PartialEq, Eq, thiserror::Error)]
pub enum NumericalFailure {
    #[error("the unstable block of the Schur form is singular")]
    UnstableBlockSingular,
    #[error("the stable block of T is singular")]
    StableBlockSingular,
    #[error("the static block is singular")]
    StaticBlockSingular,
    /// `variable` (0-based, declaration order) has no place in the canonical form.
    #[error("variable #{} has no place in the canonical form", .variable + 1)]
    Unplaced { variable: usize },
}

/// Everything about a model's structure that solving needs, computed once.
#[derive(Debug, Clone)]
pub struct PreparedModel {
    compiled: CompiledModel,
    layout: Layout,
    n_parameters: usize,
    n_variables: usize,
    n_shocks: usize,
    static_treatment: StaticTreatment,
    derivative_time: Duration,
    /// Per variable: a `predetermined` stock solved in end-of-period timing (`model::timing`).
    stocks: Vec<bool>,
}

/// The intermediate results of one solve, for tests, benchmarks and the curious.
#[derive(Debug, Clone)]
pub struct SolveDetails {
    pub solved: SolvedModel,
    pub timings: Timings,
    pub linear: LinearSystem,
    pub pencil: Pencil,
    /// Largest relative residual of the solution in the linearized equations (`None` when there
    /// is no solution).
    pub max_residual: Option<f64>,
    pub steady_iterations: usize,
}

impl PreparedModel {
    /// Differentiates and compiles `model` and lays out its canonical form.
    pub fn new(model: &Model) -> Result<PreparedModel, SolveError> {
        let start = Instant::now();
        let stocks = timing::stocks(model);
        let model = &*timing::end_of_period(model);
        let compiled = CompiledModel::new(model);
        let layout = Layout::new(model, &compiled);
        Ok(PreparedModel {
            stocks,
            compiled,
            layout,
            n_parameters: model.parameters.len(),
            n_variables: model.endogenous.len(),
            n_shocks: model.exogenous.len(),
            static_treatment: StaticTreatment::default(),
            derivative_time: start.elapsed(),
        })
    }

    /// The same preparation with another treatment of static variables (for measurements).
    pub fn with_static_treatment(mut self, treatment: StaticTreatment) -> Self {
        self.static_treatment = treatment;
        self
    }

    pub fn layout(&self) -> &Layout {
        &self.layout
    }

    pub fn compiled(&self) -> &CompiledModel {
        &self.compiled
    }

    /// Solves `model` (same structure as the one prepared). Returns the solved model (status,
    /// roots, diagnosis, solution when determinate) and the time of each phase (`derivatives` is
    /// the preparation's).
    pub fn solve(
        &self,
        model: &Model,
        options: &SolveOptions,
    ) -> Result<(SolvedModel, Timings), SolveError> {
        self.solve_detailed(model, options)
            .map(|d| (d.solved, d.timings))
    }

    /// As [`Self::solve`], keeping the intermediate results.
    pub fn solve_detailed(
        &self,
        model: &Model,
        options: &SolveOptions,
    ) -> Result<SolveDetails, SolveError> {
        let written = model;
        let model = &*timing::end_of_period(model);
        if model.parameters.len() != self.n_parameters
            || model.endogenous.len() != self.n_variables
            || model.exogenous.len() != self.n_shocks
            || model.equations.len() != self.compiled.n_equations
        {
            return Err(SolveError::StructureMismatch(format!(
                "{} variables, {} shocks, {} parameters, prepared for {}, {}, {}",
                model.endogenous.len(),
                model.exogenous.len(),
                model.parameters.len(),
                self.n_variables,
                self.n_shocks,
                self.n_parameters
            )));
        }
        if model.equations.len() > MAX_EQUATIONS {
            return Err(SolveError::TooLarge {
                what: "the number of equations",
                size: model.equations.len(),
                limit: MAX_EQUATIONS,
            });
        }
        let mut timings = Timings {
            derivatives: self.derivative_time,
            ..Timings::default()
        };
        let params: Vec<f64> = model.parameters.iter().map(|p| p.value).collect();
        if let Some(p) = model.parameters.iter().find(|p| !p.value.is_finite()) {
            return Err(SolveError::NonFiniteParameter {
                name: p.name.clone(),
                value: p.value,
            });
        }
        let tau = threshold(model, options.threshold)?;

        // The size limit is known from the layout alone: check it before the steady state, whose
        // Newton iteration on a model past the limit would take tens of seconds first.
        let smallest = self.layout.states.len() + self.layout.forward.len();
        if smallest > MAX_PENCIL_DIM {
            return Err(SolveError::TooLarge {
                what: "the dimension of the canonical form",
                size: smallest,
                limit: MAX_PENCIL_DIM,
            });
        }

        let t0 = Instant::now();
        let steady = solve_steady(model, &self.compiled, &params)?;
        timings.steady_state = t0.elapsed();

        let t0 = Instant::now();
        let linear = linearize(model, &self.compiled, &params, &steady.values)?;
        timings.linearization = t0.elapsed();

        let t0 = Instant::now();
        // Everything from the canonical form on works in balanced units (see
        // `linear::balance`), so that no result depends on the units of equations or variables;
        // the solution is brought back to the model's units before it is checked and reported.
        let scaling = Scaling::of(&linear);
        let balanced = scaling.apply(&linear);
        let mut pencil = build_pencil(&self.layout, &balanced, self.static_treatment)?;
        equilibrate_rows(&mut pencil);
        timings.canonical_form = t0.elapsed();

        let mut warnings = steady.notes.clone();
        for i in timing::idle_markers(written) {
            warnings.push(format!(
                "{} is declared predetermined but never appears with a lead, so the marker changes nothing",
                written.endogenous[i].name
            ));
        }
        warnings.extend(super::threshold::below_one_warning(tau));
        warnings.extend(linear.warnings.iter().cloned());
        if pencil.statics_kept_for_rank {
            warnings.push(
                "the variables without leads or lags could not be eliminated exactly (their coefficients are rank deficient), so they were kept in the canonical form".to_string(),
            );
        }
        let sd_defaulted: Vec<&str> = model
            .exogenous
            .iter()
            .zip(&model.sd_given)
            .filter(|(_, g)| !**g)
            .map(|(e, _)| e.name.as_str())
            .collect();
        if !sd_defaulted.is_empty() {
            warnings.push(format!(
                "no sd or var given for {}: using sd 1",
                sd_defaulted.join(", ")
            ));
        }

        let t0 = Instant::now();
        let dim = pencil.dim();
        if dim > MAX_PENCIL_DIM {
            return Err(SolveError::TooLarge {
                what: "the dimension of the canonical form",
                size: dim,
                limit: MAX_PENCIL_DIM,
            });
        }
        let nk = pencil.n_predetermined;
        let mut schur = if dim > 0 {
            Some(
                GeneralizedSchur::new(pencil.b.clone(), pencil.a.clone())
                    .map_err(|e| qz_error(e, model, &linear))?,
            )
        } else {
            None
        };
        let boundary_stable = options.boundary_stable;
        let select = move |alpha: C64, beta: C64| is_stable(alpha, beta, tau, boundary_stable);
        let n_stable = match schur.as_mut() {
            Some(s) => s.reorder(select).map_err(|e| qz_error(e, model, &linear))?,
            None => 0,
        };
        timings.qz = t0.elapsed();

        let t0 = Instant::now();
        let pairs = schur.as_ref().map(|s| s.eigenvalues()).unwrap_or_default();
        let roots = roots_table(&pairs, tau, boundary_stable);
        for r in roots.iter().filter(|r| r.boundary) {
            warnings.push(format!(
                "a root of modulus {} lies within {BOUNDARY_TOL:e} (relative) of the threshold {}; it is counted as {} ({})",
                r.modulus.unwrap_or(f64::INFINITY),
                super::threshold::show(tau),
                if r.stable { "stable" } else { "unstable" },
                if boundary_stable {
                    "roots on the boundary count as stable by default"
                } else {
                    "roots on the boundary are counted as unstable, as asked"
                }
            ));
        }
        let counts = Counts {
            stable: n_stable,
            unstable: dim - n_stable,
            forward_looking: dim - nk,
            predetermined: nk,
        };
        let mut status = if n_stable == nk {
            Status::Determinate
        } else if n_stable > nk {
            Status::Indeterminate
        } else {
            Status::NoStableSolution
        };
        let mut solution = None;
        let mut diagnosis_text = None;
        let mut max_residual = None;
        if status == Status::Determinate {
            match decision_rule(schur.as_ref(), &pencil, n_stable)? {
                RuleOutcome::Rule {
                    n,
                    m,
                    gk,
                    hk,
                    imaginary,
                } => {
                    if imaginary > IMAGINARY_TOL {
                        warnings.push(format!(
                            "the solution matrices have imaginary parts up to {imaginary:.1e} (relative) that were dropped; the stable roots may include an unpaired complex root near the threshold"
                        ));
                    }
                    let space = state_space(&self.layout, &pencil, &n, &m, &gk, &hk)?;
                    let space = to_model_units(space, &self.layout, &scaling);
                    let resid = super::check::plug_back(&linear, &self.layout, &space);
                    if resid.is_nan() || resid > PLUG_BACK_TOL {
                        warnings.push(format!(
                            "the solution leaves a relative residual of {resid:.1e} in the linearized equations (above {PLUG_BACK_TOL:e}); the results may be inaccurate because the system is badly conditioned"
                        ));
                    }
                    max_residual = Some(resid);
                    let names = written.variable_names();
                    solution = Some(super::stocks::to_start_of_period(
                        space,
                        &self.stocks,
                        &self.layout,
                        &names,
                    ));
                }
                RuleOutcome::RankFailure { sigma } => {
                    status = Status::RankFailure;
                    diagnosis_text = Some(diagnosis::rank_failure(&counts, sigma, tau));
                }
            }
        }
        if status == Status::Indeterminate || status == Status::NoStableSolution {
            // Loadings read best on the pencil whose rows are the model's own equations.
            let kept;
            let for_diagnosis = if pencil.statics.is_some() {
                kept = build_pencil(&self.layout, &balanced, StaticTreatment::Keep)?;
                &kept
            } else {
                &pencil
            };
            let mut text = diagnosis::count_failure(status, &counts, &roots, tau, for_diagnosis);
            if status == Status::Indeterminate {
                let excess = counts.forward_looking.saturating_sub(counts.unstable);
                for sentence in diagnosis::indeterminacy_advice(written, &linear, excess) {
                    text.push(' ');
                    text.push_str(&sentence);
                }
            }
            if let Some(hint) = super::threshold::discount_hint(model, &roots, tau) {
                text.push(' ');
                text.push_str(&hint);
            }
            diagnosis_text = Some(text);
        }
        timings.solution = t0.elapsed();

        let solved = SolvedModel {
            title: model.title.clone(),
            status,
            threshold: tau,
            counts,
            roots,
            variables: model.variable_names(),
            log: model.endogenous.iter().map(|v| v.log).collect(),
            shocks: model.shock_names(),
            steady_state: steady.values.clone(),
            covariance: model.covariance.clone(),
            diagnosis: diagnosis_text,
            warnings,
            solution,
        };
        Ok(SolveDetails {
            solved,
            timings,
            linear,
            pencil,
            max_residual,
            steady_iterations: steady.iterations,
        })
    }
}

/// Prepares and solves `model` once.
pub fn solve(model: &Model, options: &SolveOptions) -> Result<SolvedModel, SolveError> {
    PreparedModel::new(model)?
        .solve(model, options)
        .map(|(s, _)| s)
}

/// The stable-root threshold for `setting`, evaluated at `model`'s calibration.
pub fn threshold(model: &Model, setting: ThresholdSetting) -> Result<f64, SolveError> {
    let (value, source_desc) = match setting {
        ThresholdSetting::Explicit(x) => (x, "given explicitly".to_string()),
        ThresholdSetting::Discount(b) => (1.0 / b.sqrt(), format!("1/sqrt of discount {b}")),
        ThresholdSetting::FromModel => {
            if let Some(e) = &model.options.threshold {
                (
                    model.eval_parameters(e),
                    "the file's `threshold` option".into(),
                )
            } else if let Some(e) = &model.options.discount {
                let b = model.eval_parameters(e);
                (
                    1.0 / b.sqrt(),
                    format!("1/sqrt of the file's `discount` option, {b}"),
                )
            } else {
                (1.0, "default".into())
            }
        }
    };
    if value.is_finite() && value > 0.0 {
        Ok(value)
    } else {
        Err(SolveError::BadThreshold { value, source_desc })
    }
}

/// Whether |alpha/beta| counts as stable against `tau` (without forming the ratio): an infinite
/// root (|alpha| > [`INFINITE_MODULUS`] |beta|) never; a root in the [`BOUNDARY_TOL`] band of
/// [`root_position`] as `boundary_stable` says.
pub fn is_stable(alpha: C64, beta: C64, tau: f64, boundary_stable: bool) -> bool {
    if alpha.norm() > INFINITE_MODULUS * beta.norm() {
        return false;
    }
    match root_position(alpha, beta, tau, BOUNDARY_TOL) {
        RootPosition::Inside => true,
        RootPosition::Boundary => boundary_stable,
        RootPosition::Outside => false,
    }
}

/// The roots by increasing modulus, infinite ones last.
fn roots_table(pairs: &[(C64, C64)], tau: f64, boundary_stable: bool) -> Vec<Root> {
    let mut roots: Vec<Root> = pairs
        .iter()
        .map(|&(alpha, beta)| {
            let a = alpha.norm();
            let b = beta.norm();
            let infinite = a > INFINITE_MODULUS * b;
            let stable = is_stable(alpha, beta, tau, boundary_stable);
            if infinite {
                Root {
                    re: f64::INFINITY,
                    im: 0.0,
                    modulus: None,
                    infinite: true,
                    stable: false,
                    boundary: false,
                }
            } else {
                let lambda = alpha / beta;
                // Complex arithmetic leaves rounding-level imaginary parts on real roots (and
                // rounding-level values on zero roots): below ROUND_OFF they are zero.
                let size = lambda.norm().max(1.0);
                let clean = |x: f64| if x.abs() <= ROUND_OFF * size { 0.0 } else { x };
                let lambda = C64::new(clean(lambda.re), clean(lambda.im));
                let modulus = lambda.norm();
                Root {
                    re: lambda.re,
                    im: lambda.im,
                    modulus: Some(modulus),
                    infinite: false,
                    stable,
                    boundary: root_position(lambda, C64::new(1.0, 0.0), tau, BOUNDARY_TOL)
                        == RootPosition::Boundary,
                }
            }
        })
        .collect();
    roots.sort_by(|x, y| {
        let mx = x.modulus.unwrap_or(f64::INFINITY);
        let my = y.modulus.unwrap_or(f64::INFINITY);
        mx.partial_cmp(&my)
            .unwrap_or(std::cmp::Ordering::Equal)
            .then(x.im.partial_cmp(&y.im).unwrap_or(std::cmp::Ordering::Equal))
    });
    roots
}

fn qz_error(e: QzError, model: &Model, linear: &LinearSystem) -> SolveError {
    match e {
        QzError::SingularPencil { .. } => {
            let mut vars: Vec<usize> = linear.variable_terms.iter().map(|t| t.variable).collect();
            vars.sort();
            vars.dedup();
            // Variables that no equation moves at the steady state are the usual culprits.
            let absent: Vec<String> = (0..model.endogenous.len())
                .filter(|j| !vars.contains(j))
                .map(|j| model.endogenous[j].name.clone())
                .collect();
            SolveError::SingularPencil { absent }
        }
        other => SolveError::Qz(other),
    }
}

/// The decision rule in the canonical form's coordinates, or a rank failure.
enum RuleOutcome {
    Rule {
        n: DMatrix<f64>,
        m: DMatrix<f64>,
        gk: DMatrix<f64>,
        hk: DMatrix<f64>,
        imaginary: f64,
    },
    RankFailure {
        sigma: f64,
    },
}

/// Largest block for which the rank condition uses an exact SVD.
const SVD_LIMIT: usize = 60;
/// Power-iteration steps for the 2-norm estimate (convergence is geometric in the ratio of the two
/// largest singular values; 30 steps leave an error of a few percent in the worst common cases).
const POWER_STEPS: usize = 30;

/// Solves `lhs * X = rhs` by LU; `None` if `lhs` is singular.
fn solve_left(lhs: DMatrix<C64>, rhs: &DMatrix<C64>) -> Option<DMatrix<C64>> {
    if lhs.nrows() == 0 {
        return Some(DMatrix::zeros(0, rhs.ncols()));
    }
    let x = lhs.lu().solve(rhs)?;
    if x.iter().all(|v| v.re.is_finite() && v.im.is_finite()) {
        Some(x)
    } else {
        None
    }
}

/// Real part, and the largest imaginary part relative to the largest modulus.
fn real_part(m: &DMatrix<C64>) -> (DMatrix<f64>, f64) {
    let big = m.iter().fold(0.0f64, |a, v| a.max(v.norm()));
    let im = m.iter().fold(0.0f64, |a, v| a.max(v.im.abs()));
    (m.map(|v| v.re), if big > 0.0 { im / big } else { 0.0 })
}

/// Scales each row of the pencil's `[A B C]` by a power of two so that its largest entry lies in
/// [1/2, 1) (`qz::balance::row_equilibration_exponents`). A row of the canonical form is one
/// equation, and multiplying an equation by a constant changes neither its roots nor its
/// solution, so the scaling needs no undoing; powers of two make it exact. It matters when
/// equations are written in very different units (one in billions, one in fractions): the QZ
/// judges negligible entries against the norms of the whole matrices, and without this a row
/// 1e16 times smaller than the others would be treated as zero.
fn equilibrate_rows(pencil: &mut Pencil) {
    let exponents = crate::qz::balance::row_equilibration_exponents(&pencil.b, &pencil.a);
    crate::qz::balance::scale_rows(&mut pencil.a, &exponents);
    crate::qz::balance::scale_rows(&mut pencil.b, &exponents);
    crate::qz::balance::scale_rows(&mut pencil.c, &exponents);
}

/// The formulas of the module doc. `ns` stable roots lead the reordered decomposition.
fn decision_rule(
    schur: Option<&GeneralizedSchur>,
    pencil: &Pencil,
    ns: usize,
) -> Result<RuleOutcome, SolveError> {
    let dim = pencil.dim();
    let nk = pencil.n_predetermined;
    let nx = dim - nk;
    let ne = pencil.c.ncols();
    let Some(schur) = schur else {
        return Ok(RuleOutcome::Rule {
            n: DMatrix::zeros(0, 0),
            m: DMatrix::zeros(0, ne),
            gk: DMatrix::zeros(0, 0),
            hk: DMatrix::zeros(0, ne),
            imaginary: 0.0,
        });
    };
    let nu = dim - ns;
    let (q, z, s, t) = (schur.q(), schur.z(), schur.s(), schur.t());
    let qc = cmul(&q.adjoint(), &to_complex(&pencil.c));
    let s22 = s.view((ns, ns), (nu, nu)).into_owned();
    let qc2 = qc.rows(ns, nu).into_owned();
    let m2 = -solve_left(s22, &qc2).ok_or(SolveError::Numerical(
        NumericalFailure::UnstableBlockSingular,
    ))?;
    let zk1 = z.view((0, 0), (nk, ns)).into_owned();
    let zk2 = z.view((0, ns), (nk, nu)).into_owned();
    let zx1 = z.view((nk, 0), (nx, ns)).into_owned();
    let zx2 = z.view((nk, ns), (nx, nu)).into_owned();
    // Rank condition: sigma_min(Z_k1) = 1 / ||Z_k1^{-1}||_2. Exact singular values for small
    // blocks; above SVD_LIMIT the 2-norm of the inverse is estimated by power iteration on
    // W^H W (a lower bound accurate to a few percent after POWER_STEPS steps, so sigma is
    // overestimated by at most that much near the tolerance).
    let eye = DMatrix::<C64>::identity(nk, nk);
    let Some(w) = solve_left(zk1.clone(), &eye) else {
        return Ok(RuleOutcome::RankFailure { sigma: 0.0 });
    };
    if nk > 0 {
        let sigma = if nk <= SVD_LIMIT {
            zk1.clone()
                .singular_values()
                .iter()
                .copied()
                .fold(f64::INFINITY, f64::min)
        } else {
            1.0 / spectral_norm_estimate(&w, POWER_STEPS)
        };
        if sigma.is_nan() || sigma < RANK_TOL {
            return Ok(RuleOutcome::RankFailure { sigma });
        }
    }
    let n = cmul(&zx1, &w);
    let wzm = cmul(&cmul(&w, &zk2), &m2);
    let m = cmul(&zx2, &m2) - cmul(&zx1, &wzm);
    let s11 = s.view((0, 0), (ns, ns)).into_owned();
    let s12 = s.view((0, ns), (ns, nu)).into_owned();
    let t11 = t.view((0, 0), (ns, ns)).into_owned();
    let qc1 = qc.rows(0, ns).into_owned();
    let inner_k = cmul(&s11, &w);
    let inner_e = cmul(&s12, &m2) + qc1 - cmul(&s11, &wzm);
    let tk = solve_left(t11.clone(), &inner_k)
        .ok_or(SolveError::Numerical(NumericalFailure::StableBlockSingular))?;
    let te = solve_left(t11, &inner_e)
        .ok_or(SolveError::Numerical(NumericalFailure::StableBlockSingular))?;
    let gk = cmul(&zk1, &tk);
    let hk = cmul(&zk1, &te);
    let (n, i1) = real_part(&n);
    let (m, i2) = real_part(&m);
    let (gk, i3) = real_part(&gk);
    let (hk, i4) = real_part(&hk);
    Ok(RuleOutcome::Rule {
        n,
        m,
        gk,
        hk,
        imaginary: i1.max(i2).max(i3).max(i4),
    })
}

/// P, Q, G, H for the declared variables and named states, recovering eliminated statics.
fn state_space(
    layout: &Layout,
    pencil: &Pencil,
    n: &DMatrix<f64>,
    m: &DMatrix<f64>,
    gk: &DMatrix<f64>,
    hk: &DMatrix<f64>,
) -> Result<StateSpace, SolveError> {
    let nv = layout.n_variables;
    let nk = pencil.n_predetermined;
    let ne = pencil.c.ncols();
    let mut p = DMatrix::<f64>::zeros(nv, nk);
    let mut qm = DMatrix::<f64>::zeros(nv, ne);
    let mut done = vec![false; nv];
    for (j, done_j) in done.iter_mut().enumerate() {
        if let Some(x) = pencil.forward_index(j, 0) {
            let r = x - nk;
            p.row_mut(j).copy_from(&n.row(r));
            qm.row_mut(j).copy_from(&m.row(r));
            *done_j = true;
        } else if let Some(s) = layout.state_of_variable(j, 1) {
            p.row_mut(j).copy_from(&gk.row(s));
            qm.row_mut(j).copy_from(&hk.row(s));
            *done_j = true;
        }
    }
    if let Some(st) = &pencil.statics {
        // z_t and E_t z_{t+1} as maps of [k_t, e_t].
        let dim = pencil.dim();
        let mut now = DMatrix::<f64>::zeros(dim, nk + ne);
        let mut next = DMatrix::<f64>::zeros(dim, nk + ne);
        for i in 0..nk {
            now[(i, i)] = 1.0;
        }
        now.view_mut((nk, 0), (dim - nk, nk)).copy_from(n);
        now.view_mut((nk, nk), (dim - nk, ne)).copy_from(m);
        next.view_mut((0, 0), (nk, nk)).copy_from(gk);
        next.view_mut((0, nk), (nk, ne)).copy_from(hk);
        let ngk = n * gk;
        let nhk = n * hk;
        next.view_mut((nk, 0), (dim - nk, nk)).copy_from(&ngk);
        next.view_mut((nk, nk), (dim - nk, ne)).copy_from(&nhk);
        let mut rhs = &st.a1 * &next - &st.b1 * &now;
        {
            let mut e_part = rhs.view_mut((0, nk), (st.variables.len(), ne));
            e_part -= &st.c1;
        }
        let ys =
            st.r.clone()
                .lu()
                .solve(&(-rhs))
                .ok_or(SolveError::Numerical(NumericalFailure::StaticBlockSingular))?;
        for (c, &j) in st.variables.iter().enumerate() {
            p.row_mut(j).copy_from(&ys.view((c, 0), (1, nk)));
            qm.row_mut(j).copy_from(&ys.view((c, nk), (1, ne)));
            done[j] = true;
        }
    }
    if let Some(j) = done.iter().position(|d| !d) {
        return Err(SolveError::Numerical(NumericalFailure::Unplaced {
            variable: j,
        }));
    }
    let mut g = gk.clone();
    let mut h = hk.clone();
    clean_pair(&mut p, &mut qm);
    clean_pair(&mut g, &mut h);
    Ok(StateSpace {
        states: layout.state_names.clone(),
        p,
        q: qm,
        g,
        h,
    })
}

/// Sets to zero the entries of the pair `[a b]` (same rows) that are below [`CLEAN_TOL`] times
/// both the largest entry of their row and the largest entry of their column: round-off from the
/// QZ, negligible in the units of the entry's variable and of its state alike. The pair is in
/// balanced units (`linear::balance`) when this runs, so the test does not depend on the model's
/// units either. Overwrites `a` and `b`.
fn clean_pair(a: &mut DMatrix<f64>, b: &mut DMatrix<f64>) {
    let rows = a.nrows();
    let mut row_max = vec![0.0f64; rows];
    for (i, r) in row_max.iter_mut().enumerate() {
        let ra = a.row(i).iter().fold(0.0f64, |m, v| m.max(v.abs()));
        let rb = b.row(i).iter().fold(0.0f64, |m, v| m.max(v.abs()));
        *r = ra.max(rb);
    }
    for m in [&mut *a, &mut *b] {
        for j in 0..m.ncols() {
            let col_max = m.column(j).iter().fold(0.0f64, |x, v| x.max(v.abs()));
            for (i, rm) in row_max.iter().enumerate() {
                let v = m[(i, j)];
                if v.abs() <= CLEAN_TOL * rm.min(col_max) {
                    m[(i, j)] = 0.0;
                }
            }
        }
    }
}

/// Brings a solution computed in balanced units back to the model's units (exact: the factors
/// are powers of two). With yhat_j = 2^{c_j} y~_j and each state scaled like its variable
/// (innovation states are not scaled): P_ja = 2^{c_j - c_a} P~_ja, Q_js = 2^{c_j} Q~_js,
/// G_ab = 2^{c_a - c_b} G~_ab, H_as = 2^{c_a} H~_as. Consumes and returns the state space.
fn to_model_units(mut space: StateSpace, layout: &Layout, scaling: &Scaling) -> StateSpace {
    let state_exp: Vec<i32> = layout
        .states
        .iter()
        .map(|s| match s {
            StateElement::VariableLag { variable, .. } => {
                scaling.variables.get(*variable).copied().unwrap_or(0)
            }
            StateElement::ShockLag { .. } => 0,
        })
        .collect();
    let var_exp = &scaling.variables;
    let rescale = |m: &mut DMatrix<f64>, row: &dyn Fn(usize) -> i32, col: &dyn Fn(usize) -> i32| {
        for j in 0..m.ncols() {
            for i in 0..m.nrows() {
                m[(i, j)] = scaled(m[(i, j)], row(i) - col(j));
            }
        }
    };
    let var = |i: usize| var_exp.get(i).copied().unwrap_or(0);
    let state = |a: usize| state_exp.get(a).copied().unwrap_or(0);
    let none = |_: usize| 0;
    rescale(&mut space.p, &var, &state);
    rescale(&mut space.q, &var, &none);
    rescale(&mut space.g, &state, &state);
    rescale(&mut space.h, &state, &none);
    space
}
