//! Sentences a person can act on when there is no unique stable solution.
//!
//! Contract: a diagnosis states the count that fails (unstable roots, infinite ones included,
//! against forward-looking elements, Blanchard and Kahn 1980, Econometrica 48), by how much, the
//! roots nearest the threshold and, for indeterminacy and for explosive roots, which variables the
//! offending root's eigenvector loads on most. The eigenvector comes from reordering a fresh
//! generalized Schur form so that the offending root leads: the first column(s) of Z then span its
//! (right) deflating subspace (Golub and Van Loan, Matrix Computations, 4th ed., §7.7.8).

use super::solve::INFINITE_MODULUS;
use super::{Counts, Root, Status};
use crate::canonical::Pencil;
use crate::linear::LinearSystem;
use crate::model::{Expr, Model};
use crate::qz::GeneralizedSchur;

/// How many roots near the threshold a diagnosis lists.
const NEAREST_ROOTS: usize = 3;
/// Variables named in a loading sentence, and the smallest share (of the squared eigenvector) a
/// named variable must carry.
const LOADING_NAMES: usize = 3;
const LOADING_MIN_SHARE: f64 = 0.05;
/// Roots whose moduli agree to this relative tolerance are reordered together (a complex pair).
const SAME_MODULUS: f64 = 1e-9;
/// An accumulation law x[t+1] = a x[t] + ... is read as one when |a| <= 1 + this (relative to
/// one: the coefficients' ratio is scale-free); the slack only absorbs rounding of a = 1.
const STOCK_RATIO_TOL: f64 = 1e-9;

fn plural(n: usize, one: &str, many: &str) -> String {
    format!("{n} {}", if n == 1 { one } else { many })
}

/// A root as a person reads it: `0.95`, `1.02 +/- 0.31i`, `infinite`.
pub fn describe_root(r: &Root) -> String {
    match r.modulus {
        None => "infinite".to_string(),
        Some(m) => {
            if r.im.abs() > 1e-12 * m.max(1e-300) {
                format!(
                    "{:.4} {} {:.4}i (modulus {:.4})",
                    r.re,
                    if r.im < 0.0 { "-" } else { "+" },
                    r.im.abs(),
                    m
                )
            } else {
                format!("{:.4}", r.re)
            }
        }
    }
}

/// The roots nearest the threshold, each with its side.
fn nearest(roots: &[Root], tau: f64) -> String {
    let mut idx: Vec<usize> = (0..roots.len()).collect();
    let dist = |r: &Root| match r.modulus {
        Some(m) if m > 0.0 => (m / tau).ln().abs(),
        Some(_) => f64::INFINITY,
        None => f64::INFINITY,
    };
    idx.sort_by(|&a, &b| {
        dist(&roots[a])
            .partial_cmp(&dist(&roots[b]))
            .unwrap_or(std::cmp::Ordering::Equal)
    });
    let mut seen: Vec<String> = Vec::new();
    for &i in &idx {
        let r = &roots[i];
        if r.infinite {
            continue;
        }
        // A complex pair is listed once.
        if r.im < 0.0
            && roots
                .iter()
                .any(|o| o.im > 0.0 && (o.re - r.re).abs() <= 1e-12 * r.re.abs().max(1.0))
        {
            continue;
        }
        seen.push(format!(
            "{} ({})",
            describe_root(r),
            if r.stable { "stable" } else { "unstable" }
        ));
        if seen.len() >= NEAREST_ROOTS {
            break;
        }
    }
    if seen.is_empty() {
        "none finite".to_string()
    } else {
        seen.join(", ")
    }
}

/// Whether `(alpha, beta)` is one of the roots with modulus `target` (None: infinite).
fn is_target(alpha: crate::qz::C64, beta: crate::qz::C64, target: Option<f64>) -> bool {
    let a = alpha.norm();
    let b = beta.norm();
    match target {
        None => a > INFINITE_MODULUS * b,
        Some(m) => a <= INFINITE_MODULUS * b && (a - m * b).abs() <= SAME_MODULUS * a.max(m * b),
    }
}

/// Shares of the squared entries of `cols` columns of `v` (starting at `first`), summed by name
/// (the part before `[`), as `infl (61%), gap (30%)`.
fn shares(
    v: &nalgebra::DMatrix<crate::qz::C64>,
    first: usize,
    cols: usize,
    names: &[String],
) -> Option<String> {
    let mut by_name: Vec<(String, f64)> = Vec::new();
    let mut total = 0.0;
    for (i, name) in names.iter().enumerate().take(v.nrows()) {
        let w: f64 = (first..first + cols).map(|c| v[(i, c)].norm_sqr()).sum();
        total += w;
        let base = match name.strip_prefix("the definition of ") {
            Some(rest) => format!(
                "the definition of {}",
                rest.split('[').next().unwrap_or(rest)
            ),
            None => name.split('[').next().unwrap_or(name).to_string(),
        };
        match by_name.iter_mut().find(|(n, _)| *n == base) {
            Some(e) => e.1 += w,
            None => by_name.push((base, w)),
        }
    }
    if total.is_nan() || total <= 0.0 {
        return None;
    }
    by_name.sort_by(|a, b| b.1.partial_cmp(&a.1).unwrap_or(std::cmp::Ordering::Equal));
    let parts: Vec<String> = by_name
        .iter()
        .take(LOADING_NAMES)
        .filter(|(_, w)| w / total >= LOADING_MIN_SHARE)
        .map(|(n, w)| format!("{n} ({:.0}%)", 100.0 * w / total))
        .collect();
    if parts.is_empty() {
        None
    } else {
        Some(parts.join(", "))
    }
}

/// For the roots with modulus `target` (None: infinite): the variables their right deflating
/// subspace loads on most (leading columns of Z after moving them first) and the equations their
/// left subspace weighs most (trailing columns of Q after moving them last).
fn loadings(pencil: &Pencil, target: Option<f64>) -> (Option<String>, Option<String>) {
    let right = (|| {
        let mut schur = GeneralizedSchur::new(pencil.b.clone(), pencil.a.clone()).ok()?;
        let count = schur.reorder(|a, b| is_target(a, b, target)).ok()?;
        if count == 0 {
            return None;
        }
        shares(schur.z(), 0, count, &pencil.names)
    })();
    let left = (|| {
        let mut schur = GeneralizedSchur::new(pencil.b.clone(), pencil.a.clone()).ok()?;
        let others = schur.reorder(|a, b| !is_target(a, b, target)).ok()?;
        let n = schur.dim();
        if others >= n {
            return None;
        }
        shares(schur.q(), others, n - others, &pencil.row_names)
    })();
    (right, left)
}

fn loading_sentence(what: &str, right: Option<String>, left: Option<String>) -> String {
    let mut out = String::new();
    if let Some(r) = right {
        out.push_str(&format!(" {what} moves mostly {r}"));
        if let Some(l) = &left {
            out.push_str(&format!(" and comes mostly from {l}"));
        }
        out.push('.');
    } else if let Some(l) = left {
        out.push_str(&format!(" {what} comes mostly from {l}."));
    }
    out
}

/// The diagnosis of a failed counting condition.
pub fn count_failure(
    status: Status,
    counts: &Counts,
    roots: &[Root],
    tau: f64,
    pencil: &Pencil,
) -> String {
    let u = counts.unstable;
    let f = counts.forward_looking;
    let head = format!(
        "{} outside the threshold {} (infinite ones included) against {}",
        plural(u, "root lies", "roots lie"),
        super::threshold::show(tau),
        plural(f, "forward-looking variable", "forward-looking variables")
    );
    let near = format!("Roots nearest the threshold: {}.", nearest(roots, tau));
    match status {
        Status::Indeterminate => {
            let surplus = roots
                .iter()
                .filter(|r| r.stable)
                .filter_map(|r| r.modulus)
                .fold(None::<f64>, |a, m| Some(a.map_or(m, |a| a.max(m))));
            let load = surplus
                .map(|m| {
                    // Only the right subspace: the left one of a surplus stable root mixes
                    // every equation that feeds it and reads as noise.
                    let (r, _) = loadings(pencil, Some(m));
                    loading_sentence(
                        &format!("The surplus stable direction (modulus {m:.4})"),
                        r,
                        None,
                    )
                })
                .unwrap_or_default();
            format!(
                "Indeterminate: {head}, {} too few, so many stable solutions exist (self-fulfilling fluctuations are possible). {near}{load}",
                f - u
            )
        }
        _ => {
            let surplus = roots.iter().filter(|r| !r.stable).map(|r| r.modulus).next();
            let load = surplus
                .map(|m| {
                    let (r, l) = loadings(pencil, m);
                    let what = match m {
                        Some(m) => format!(
                            "The explosive direction nearest the threshold (modulus {m:.4})"
                        ),
                        None => "The surplus infinite root".to_string(),
                    };
                    loading_sentence(&what, r, l)
                })
                .unwrap_or_default();
            format!(
                "No stable solution: {head}, {} too many, so no solution stays bounded. {near}{load} Check the signs and sizes of the coefficients on lagged variables (a backward-looking root above the threshold cannot be offset by expectations).",
                u - f
            )
        }
    }
}

/// The diagnosis of a failed rank condition.
pub fn rank_failure(counts: &Counts, sigma: f64, tau: f64) -> String {
    format!(
        "Rank condition fails: the counts match ({} outside the threshold {} against {}), but the stable roots do not determine the forward-looking variables from the states (smallest singular value of the block linking them is {sigma:.1e}, below 1e-10). Usually a predetermined variable does not feed back into the rest of the model, or two states move identically; check the equations of the lagged variables.",
        plural(counts.unstable, "root", "roots"),
        super::threshold::show(tau),
        plural(counts.forward_looking, "forward-looking variable", "forward-looking variables")
    )
}

/// Advice for an indeterminate model, fitted to what the model has (none that does not fit:
/// no policy-rule hint in a model without a rule). `excess` is the number of surplus stable
/// roots. Returns sentences to append to the diagnosis.
///
/// - Stocks written with a lead: a variable not marked `predetermined` that appears only at t
///   and t+1, both in one equation (an accumulation law like `k[t+1] = (1 - delta) * k + inv`), is
///   read as forward-looking; when there are at most `excess` such variables they are named with
///   a pointer to the marker (spec §8).
/// - A rule: the equation an `objective` control replaces, or an equation whose label contains
///   `rule` or `policy`, is named as the place where a stronger reaction may restore determinacy.
pub fn indeterminacy_advice(model: &Model, linear: &LinearSystem, excess: usize) -> Vec<String> {
    let mut advice = Vec::new();
    let stocks = stock_like(model, linear);
    if !stocks.is_empty() && stocks.len() <= excess.max(1) {
        let names: Vec<&str> = stocks
            .iter()
            .filter_map(|&i| model.endogenous.get(i).map(|v| v.name.as_str()))
            .collect();
        let (they, are) = if names.len() == 1 {
            ("it is", "is")
        } else {
            ("they are", "are")
        };
        advice.push(format!(
            "{} {are} written like a stock at the start of the period (only at t and t+1, in an accumulation law) and so {are} read as forward-looking; if {they} known one period ahead, declare {} `predetermined` in `endogenous`.",
            names.join(", "),
            if names.len() == 1 { "it" } else { "them" }
        ));
    }
    let mut rules: Vec<&str> = Vec::new();
    if let Some(obj) = &model.objective {
        for c in &obj.controls {
            if let Some(label) = c
                .replaces
                .and_then(|e| model.equations.get(e))
                .and_then(|e| e.label.as_deref())
            {
                rules.push(label);
            }
        }
    }
    for eq in &model.equations {
        if let Some(label) = eq.label.as_deref() {
            let lower = label.to_lowercase();
            if (lower.contains("rule") || lower.contains("policy")) && !rules.contains(&label) {
                rules.push(label);
            }
        }
    }
    if !rules.is_empty() {
        advice.push(format!(
            "A rule that reacts more strongly (see {}) may restore determinacy.",
            rules
                .iter()
                .map(|l| format!("`{l}`"))
                .collect::<Vec<_>>()
                .join(", ")
        ));
    }
    advice
}

/// Variables not marked `predetermined` that look like stocks written with a lead: they appear
/// only at t and t+1 in the whole model, and some equation is an accumulation law for them: its
/// only lead is x[t+1], as a term of a sum on its own (times parameters at most, as in
/// `k[t+1] = (1 - delta) * k + inv`), and x[t] appears in it too. A forward-looking equation such
/// as `gap = gap[t+1] - (rate - infl[t+1]) / sigma` has another lead and is not one; an Euler
/// equation has its lead inside a nonlinear term and is not one. Read backwards, an accumulation
/// law does not explode: x[t+1] = a x[t] + ... with |a| <= 1 in the linearized equation, which
/// tells it from a forward-looking `infl = beta * infl[t+1] + ...` (|a| = 1/beta > 1).
fn stock_like(model: &Model, linear: &LinearSystem) -> Vec<usize> {
    let n = model.endogenous.len();
    let mut simple = vec![true; n]; // only offsets 0 and +1 anywhere
    for eq in &model.equations {
        for side in [&eq.lhs, &eq.rhs] {
            side.walk(&mut |e| {
                if let Expr::Variable { index, offset } = e {
                    if !(0..=1).contains(offset) {
                        if let Some(s) = simple.get_mut(*index) {
                            *s = false;
                        }
                    }
                }
            });
        }
    }
    let mut found = vec![false; n];
    for (r, eq) in model.equations.iter().enumerate() {
        let mut leads = Vec::new();
        let mut now = vec![false; n];
        for side in [&eq.lhs, &eq.rhs] {
            side.walk(&mut |e| {
                if let Expr::Variable { index, offset } = e {
                    if *offset > 0 {
                        leads.push(*index);
                    } else if *offset == 0 {
                        if let Some(x) = now.get_mut(*index) {
                            *x = true;
                        }
                    }
                }
            });
        }
        leads.sort_unstable();
        leads.dedup();
        let [x] = leads[..] else { continue };
        if x >= n || !simple[x] || !now[x] {
            continue;
        }
        let mut terms = Vec::new();
        additive_terms(&eq.lhs, &mut terms, 0);
        additive_terms(&eq.rhs, &mut terms, 0);
        if terms.iter().any(|t| is_scaled_lead(t, x)) {
            let coefficient = |offset: i32| -> f64 {
                linear
                    .variable_terms
                    .iter()
                    .filter(|t| t.equation == r && t.variable == x && t.offset == offset)
                    .map(|t| t.value)
                    .sum()
            };
            let (now, next) = (coefficient(0), coefficient(1));
            if next != 0.0 && (now / next).abs() <= 1.0 + STOCK_RATIO_TOL {
                found[x] = true;
            }
        }
    }
    (0..n)
        .filter(|&i| found[i] && !model.endogenous[i].predetermined)
        .collect()
}

/// Collects the terms of the sum `e` (through `+`, `-` and negation) into `out`; `depth` bounds
/// the recursion with the model's own expression limit.
fn additive_terms<'a>(e: &'a Expr, out: &mut Vec<&'a Expr>, depth: usize) {
    if depth > crate::model::MAX_EXPR_DEPTH {
        return;
    }
    match e {
        Expr::Binary(crate::model::BinaryOp::Add | crate::model::BinaryOp::Sub, a, b) => {
            additive_terms(a, out, depth + 1);
            additive_terms(b, out, depth + 1);
        }
        Expr::Neg(a) => additive_terms(a, out, depth + 1),
        _ => out.push(e),
    }
}

/// `term` is x[t+1] alone, or times or divided by numbers only (an accumulation law adds to the
/// stock itself; `beta * infl[t+1]` or `b * p[t+1]` weigh an expectation).
fn is_scaled_lead(term: &Expr, x: usize) -> bool {
    let mut leads = 0;
    let mut other = false;
    term.walk(&mut |e| match e {
        Expr::Variable { index, offset } if *index == x && *offset == 1 => leads += 1,
        Expr::Variable { .. }
        | Expr::Innovation { .. }
        | Expr::SteadyState(_)
        | Expr::Parameter(_) => other = true,
        Expr::Call(..) | Expr::Call2(..) | Expr::Binary(crate::model::BinaryOp::Pow, ..) => {
            other = true
        }
        _ => {}
    });
    leads == 1 && !other
}
