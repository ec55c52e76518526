//! What a failed steady-state search found, as data: the worst equations, the point reached, the
//! variables a singular Jacobian leaves free. [`super::SteadyError`] carries these; their
//! `Display` gives the sentences the binary prints.
//!
//! ```text
//!     worst equations: the largest |R_i(x)| / sum_k |term_ik(x)|, at most REPORT_EQUATIONS
//! ```

use std::fmt;

/// A variable at a value.
#[derive(Debug, Clone, PartialEq)]
pub struct VariableValue {
    pub name: String,
    pub value: f64,
}

impl fmt::Display for VariableValue {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{} = {}", self.name, short(self.value))
    }
}

/// A point of the search: the first few variables (at most eight) and whether there are more.
#[derive(Debug, Clone, PartialEq)]
pub struct Point {
    pub shown: Vec<VariableValue>,
    pub more: bool,
}

impl fmt::Display for Point {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}", join(&self.shown, ", "))?;
        if self.more {
            write!(f, ", ...")?;
        }
        Ok(())
    }
}

/// One of the equations whose residual stays largest.
#[derive(Debug, Clone, PartialEq)]
pub struct WorstEquation {
    /// Its label, or its number.
    pub equation: String,
    pub residual: f64,
    /// The residual relative to the size of the equation's terms.
    pub relative: f64,
    /// The endogenous variables it involves.
    pub variables: Vec<String>,
}

impl fmt::Display for WorstEquation {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(
            f,
            "{} (residual {:.3e}, {:.1e} of the size of its terms; involves {})",
            self.equation,
            self.residual,
            self.relative,
            if self.variables.is_empty() {
                "no variable".to_string()
            } else {
                self.variables.join(", ")
            }
        )
    }
}

/// The worst equations, worst first.
#[derive(Debug, Clone, PartialEq)]
pub struct ResidualReport(pub Vec<WorstEquation>);

impl fmt::Display for ResidualReport {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}", join(&self.0, "; "))
    }
}

/// What else is known when `steady` values leave equations unsatisfied.
#[derive(Debug, Clone, PartialEq)]
pub enum KnownValuesDetail {
    /// Nothing more (every variable had a value).
    None,
    /// The variables without values were fitted by least squares over this many iterations.
    FittedOver { iterations: usize },
    /// A solve for every variable puts these at other values than `steady` gives.
    Differ(Vec<ValueConflict>),
}

impl fmt::Display for KnownValuesDetail {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            KnownValuesDetail::None => Ok(()),
            KnownValuesDetail::FittedOver { iterations } => write!(
                f,
                " (the other variables were fitted by least squares over {iterations} iterations)"
            ),
            KnownValuesDetail::Differ(c) => write!(f, "; {}", join(c, "; ")),
        }
    }
}

/// A variable the equations put elsewhere than its `steady` value.
#[derive(Debug, Clone, PartialEq)]
pub struct ValueConflict {
    pub variable: String,
    pub solved: f64,
    pub given: f64,
}

impl fmt::Display for ValueConflict {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(
            f,
            "the equations put {} at {} where `steady` gives {}",
            self.variable,
            short(self.solved),
            short(self.given)
        )
    }
}

/// Where the steady-state equations cannot be evaluated.
#[derive(Debug, Clone, PartialEq)]
pub enum DomainReport {
    /// The equations with a non-finite residual (at most `REPORT_EQUATIONS`).
    Equations(Vec<DomainProblem>),
    /// The Jacobian became non-finite during Newton.
    JacobianNotFinite { iteration: usize, at: Point },
}

impl fmt::Display for DomainReport {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            DomainReport::Equations(p) => write!(f, "{}", join(p, "; ")),
            DomainReport::JacobianNotFinite { iteration, at } => {
                write!(
                    f,
                    "the Jacobian is not finite at iteration {iteration} ({at})"
                )
            }
        }
    }
}

/// An equation that cannot be evaluated: the innermost operation that fails, and the variables.
#[derive(Debug, Clone, PartialEq)]
pub struct DomainProblem {
    pub equation: String,
    /// The failing operation in words (for example `ln of -2`).
    pub what: String,
    pub at: Vec<VariableValue>,
}

impl fmt::Display for DomainProblem {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(
            f,
            "{} has {} (at {})",
            self.equation,
            self.what,
            join(&self.at, ", ")
        )
    }
}

/// A singular Jacobian: where, which variables its null direction moves, and (when Newton could
/// take no step at all) the iteration and the worst equations then.
#[derive(Debug, Clone, PartialEq)]
pub struct SingularReport {
    pub at: Point,
    /// The variables the equations do not pin down (at most four; empty when not computed).
    pub undetermined: Vec<String>,
    pub during: Option<(usize, ResidualReport)>,
}

impl fmt::Display for SingularReport {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(
            f,
            "the Jacobian of the steady-state equations is singular at {}",
            self.at
        )?;
        if !self.undetermined.is_empty() {
            write!(
                f,
                "; the equations do not pin down {} (they can move together without changing any residual)",
                self.undetermined.join(", ")
            )?;
        }
        write!(
            f,
            ". Give these variables `steady` values, a different `guess`, or check for an equation that repeats another"
        )?;
        if let Some((iteration, worst)) = &self.during {
            write!(
                f,
                " (Newton iteration {iteration}; largest residuals in {worst})"
            )?;
        }
        Ok(())
    }
}

/// A number with at most six decimals, trailing zeros dropped.
pub(super) fn short(v: f64) -> String {
    format!("{v:.6}")
        .trim_end_matches('0')
        .trim_end_matches('.')
        .to_string()
}

fn join<T: fmt::Display>(items: &[T], sep: &str) -> String {
    items
        .iter()
        .map(|x| x.to_string())
        .collect::<Vec<_>>()
        .join(sep)
}
