//! Equilibration of the linear system by powers of two, so that results do not depend on units.
//!
//! Contract: with row exponents r_i (one per equation) and column exponents c_j (one per
//! variable), the balanced system has coefficients
//!
//! ```text
//!   F~_{i,j,k} = 2^{r_i} F_{i,j,k} 2^{c_j},     E~_{i,s,l} = 2^{r_i} E_{i,s,l},
//! ```
//!
//! that is, equation i multiplied by 2^{r_i} and variable j measured as y~_j = 2^{-c_j} yhat_j.
//! Multiplying an equation by a constant changes neither roots nor solution, and a change of
//! units of a variable changes its solution coefficients by exactly that factor; powers of two
//! make both exact in floating point. The exponents come from a few sweeps of the Ruiz (2001)
//! scaling (each row and each column divided by the square root of its largest entry), rounded
//! to powers of two, so a model written in dollars and one written in billions of dollars reach
//! the canonical form, the QZ, the rank test and the cleaning of round-off in (almost) the same
//! numbers. Innovations keep their units: their covariance carries them.

use super::LinearSystem;

/// Ruiz sweeps (each sweep brings every row and column maximum closer to 1 by a square root; the
/// exponents stop changing after a handful for any practical model).
pub const BALANCE_SWEEPS: usize = 12;
/// Largest exponent magnitude applied (keeps every scaled coefficient far from overflow and
/// underflow even for absurd inputs).
pub const MAX_EXPONENT: i32 = 400;

/// The exponents of the module doc.
#[derive(Debug, Clone, PartialEq, Eq, Default)]
pub struct Scaling {
    /// r_i per equation.
    pub equations: Vec<i32>,
    /// c_j per variable: yhat_j = 2^{c_j} y~_j.
    pub variables: Vec<i32>,
}

/// The binary exponent e with |x| in [2^e, 2^{e+1}) (x finite and nonzero).
fn exponent_of(x: f64) -> i32 {
    x.abs().log2().floor() as i32
}

impl Scaling {
    /// The identity scaling for a system of this size.
    pub fn identity(n_equations: usize, n_variables: usize) -> Scaling {
        Scaling {
            equations: vec![0; n_equations],
            variables: vec![0; n_variables],
        }
    }

    /// Computes the exponents for `linear` (reads it; returns the scaling).
    pub fn of(linear: &LinearSystem) -> Scaling {
        let mut s = Scaling::identity(linear.n_equations, linear.n_variables);
        for _ in 0..BALANCE_SWEEPS {
            let mut row_max = vec![0.0f64; linear.n_equations];
            let mut col_max = vec![0.0f64; linear.n_variables];
            for t in &linear.variable_terms {
                let v = scaled(t.value, s.equations[t.equation] + s.variables[t.variable]).abs();
                if v.is_finite() {
                    row_max[t.equation] = row_max[t.equation].max(v);
                    col_max[t.variable] = col_max[t.variable].max(v);
                }
            }
            for t in &linear.innovation_terms {
                let v = scaled(t.value, s.equations[t.equation]).abs();
                if v.is_finite() {
                    row_max[t.equation] = row_max[t.equation].max(v);
                }
            }
            let mut changed = false;
            for (e, m) in s.equations.iter_mut().zip(&row_max) {
                if *m > 0.0 {
                    let d = -exponent_of(*m) / 2;
                    if d != 0 {
                        *e = (*e + d).clamp(-MAX_EXPONENT, MAX_EXPONENT);
                        changed = true;
                    }
                }
            }
            for (c, m) in s.variables.iter_mut().zip(&col_max) {
                if *m > 0.0 {
                    let d = -exponent_of(*m) / 2;
                    if d != 0 {
                        *c = (*c + d).clamp(-MAX_EXPONENT, MAX_EXPONENT);
                        changed = true;
                    }
                }
            }
            if !changed {
                break;
            }
        }
        s
    }

    /// Returns `linear` with the coefficients of the module doc (a new system; `linear` is kept).
    pub fn apply(&self, linear: &LinearSystem) -> LinearSystem {
        let mut out = linear.clone();
        for t in &mut out.variable_terms {
            t.value = scaled(
                t.value,
                self.equations[t.equation] + self.variables[t.variable],
            );
        }
        for t in &mut out.innovation_terms {
            t.value = scaled(t.value, self.equations[t.equation]);
        }
        out
    }
}

/// x * 2^e, exactly (barring overflow and underflow, which the clamped exponents rule out for
/// finite coefficients of ordinary size).
pub fn scaled(x: f64, e: i32) -> f64 {
    // Two steps so that |e| up to 2 * MAX_EXPONENT never overflows the factor itself.
    let half = e / 2;
    x * 2f64.powi(half) * 2f64.powi(e - half)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::linear::{InnovationTerm, VariableTerm};

    fn system(values: &[(usize, usize, i32, f64)], shocks: &[(usize, f64)]) -> LinearSystem {
        let n_eq = values.iter().map(|v| v.0 + 1).max().unwrap_or(0);
        let n_var = values.iter().map(|v| v.1 + 1).max().unwrap_or(0);
        LinearSystem {
            n_equations: n_eq,
            n_variables: n_var,
            n_shocks: 1,
            variable_terms: values
                .iter()
                .map(|&(equation, variable, offset, value)| VariableTerm {
                    equation,
                    variable,
                    offset,
                    value,
                })
                .collect(),
            innovation_terms: shocks
                .iter()
                .map(|&(equation, value)| InnovationTerm {
                    equation,
                    shock: 0,
                    lag: 0,
                    value,
                })
                .collect(),
            warnings: Vec::new(),
        }
    }

    #[test]
    fn brings_rows_and_columns_near_one() {
        // A variable in units 1e9 times too small and an equation 1e-6 times too large.
        let lin = system(
            &[
                (0, 0, 0, 1e9),
                (0, 1, -1, 0.5),
                (1, 0, 1, 2e9 * 1e-6),
                (1, 1, 0, 1e-6),
            ],
            &[(1, 3e-6)],
        );
        let s = Scaling::of(&lin);
        let b = s.apply(&lin);
        let mut row = [0.0f64; 2];
        let mut col = [0.0f64; 2];
        for t in &b.variable_terms {
            row[t.equation] = row[t.equation].max(t.value.abs());
            col[t.variable] = col[t.variable].max(t.value.abs());
        }
        // Power-of-two rounding leaves each maximum within a factor 4 of 1 (Ruiz converges to
        // maxima of 1; rounding each step to a power of two costs at most a factor 2 each way).
        for m in row.iter().chain(&col) {
            assert!((0.2..=5.0).contains(m), "maximum {m} after balancing");
        }
    }

    #[test]
    fn scaling_is_exact_and_invertible() {
        let lin = system(&[(0, 0, 0, 0.1), (0, 1, 1, 3.7e12)], &[(0, 1e-3)]);
        let s = Scaling::of(&lin);
        let b = s.apply(&lin);
        for (t, u) in lin.variable_terms.iter().zip(&b.variable_terms) {
            let back = scaled(
                u.value,
                -(s.equations[t.equation] + s.variables[t.variable]),
            );
            assert_eq!(back, t.value, "powers of two are exact");
        }
    }

    #[test]
    fn rescaling_a_variable_by_a_power_of_two_shifts_its_exponent() {
        let base = [
            (0, 0, 0, 1.5),
            (0, 1, -1, 0.25),
            (1, 1, 0, 3.0),
            (1, 0, 1, -0.7),
        ];
        let lin = system(&base, &[]);
        let mut other = base;
        for v in other.iter_mut().filter(|v| v.1 == 1) {
            v.3 *= 2f64.powi(20);
        }
        let lin2 = system(&other, &[]);
        let (a, b) = (
            Scaling::of(&lin).apply(&lin),
            Scaling::of(&lin2).apply(&lin2),
        );
        // The balanced systems agree up to a power-of-two factor per row and column that the
        // balancing leaves (at most a factor 4 from rounding).
        for (x, y) in a.variable_terms.iter().zip(&b.variable_terms) {
            let ratio = (x.value / y.value).abs().log2();
            assert!(ratio.abs() <= 2.0, "{} vs {}", x.value, y.value);
        }
    }
}
