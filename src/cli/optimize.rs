//! `saddle optimize FILE`: the three regimes side by side (expected loss, ratio to commitment,
//! each control's rule in the states, roots) and `--tune NAME=LO:HI` (repeatable): the simple
//! rule's parameters in those bounds with the least expected loss.
//!
//! Search: a grid (41 points for one parameter, fewer per axis for more, about 1700 points in
//! all), then three rounds of golden-section search along each parameter around the best grid
//! point, each within the grid cell around it. A point without a unique stable solution (or with
//! no stationary distribution) has loss +infinity. The search is reported (evaluations,
//! infeasible points, method): a grid plus local refinement finds the best point of a
//! multimodal surface only to the grid's resolution.

use std::time::Instant;

use super::args::{Format, OptimizeArgs};
use super::config::SolveSettings;
use super::load::load_model;
use super::output::{emit, eprintln_quiet};
use super::solve::{apply_overrides, options, policy_failure, provenance};
use super::{Failure, Outcome};
use saddle::model::Model;
use saddle::output::policy::{optimize_json, optimize_text, RegimeData, RegimeView, TunedView};
use saddle::policy::{rule_expected_loss, solve_regime, PolicyParams, Regime};
use saddle::solution::{PreparedModel, SolveOptions};

/// Largest number of tuned parameters.
const MAX_TUNED: usize = 4;
/// Grid points for the whole grid (split evenly over the axes).
const GRID_BUDGET: f64 = 1700.0;
/// Golden-section steps per parameter per round.
const GOLDEN_STEPS: usize = 30;
/// Rounds of golden-section refinement.
const ROUNDS: usize = 3;
/// Step (relative to the search range) at which the best point is probed for a neighbouring
/// point without a unique stable solution. 1e-4 is below the grid cell (1/40) and far above
/// the golden-section resolution.
const EDGE_STEP: f64 = 1e-4;

fn parse_tune(s: &str) -> Result<(String, f64, f64), Failure> {
    let bad = || Failure::usage(format!("--tune expects NAME=LO:HI with LO < HI, got `{s}`"));
    let (name, range) = s.split_once('=').ok_or_else(bad)?;
    let (lo, hi) = range.split_once(':').ok_or_else(bad)?;
    let lo: f64 = lo.trim().parse().map_err(|_| bad())?;
    let hi: f64 = hi.trim().parse().map_err(|_| bad())?;
    if !(lo.is_finite() && hi.is_finite() && lo < hi) {
        return Err(bad());
    }
    Ok((name.trim().to_string(), lo, hi))
}

struct Evaluator<'a> {
    model: &'a Model,
    prepared: PreparedModel,
    options: SolveOptions,
    names: Vec<String>,
    evaluations: usize,
    infeasible: usize,
}

impl Evaluator<'_> {
    /// Expected loss of the rule at parameter values `x` (+infinity when not solvable).
    fn loss(&mut self, x: &[f64]) -> f64 {
        self.evaluations += 1;
        let o: Vec<(String, f64)> = self.names.iter().cloned().zip(x.iter().copied()).collect();
        let value = self
            .model
            .with_overrides(&o)
            .ok()
            .and_then(|m| {
                let (s, _) = self.prepared.solve(&m, &self.options).ok()?;
                rule_expected_loss(&m, &s).ok().flatten()
            })
            .filter(|v| v.is_finite());
        match value {
            Some(v) => v,
            None => {
                self.infeasible += 1;
                f64::INFINITY
            }
        }
    }
}

fn tune(
    model: &Model,
    opts: SolveOptions,
    specs: &[(String, f64, f64)],
) -> Result<TunedView, Failure> {
    for (name, _, _) in specs {
        if model.parameter_index(name).is_none() {
            return Err(Failure::usage(format!("--tune: no parameter named {name}")));
        }
    }
    let k = specs.len();
    let prepared = PreparedModel::new(model).map_err(super::solve::failure)?;
    let mut ev = Evaluator {
        model,
        prepared,
        options: opts,
        names: specs.iter().map(|s| s.0.clone()).collect(),
        evaluations: 0,
        infeasible: 0,
    };
    let per_axis = (GRID_BUDGET.powf(1.0 / k as f64).floor() as usize).clamp(3, 41);
    let mut best = (f64::INFINITY, specs.iter().map(|s| s.1).collect::<Vec<_>>());
    let mut idx = vec![0usize; k];
    loop {
        let x: Vec<f64> = (0..k)
            .map(|d| specs[d].1 + (specs[d].2 - specs[d].1) * idx[d] as f64 / (per_axis - 1) as f64)
            .collect();
        let l = ev.loss(&x);
        if l < best.0 {
            best = (l, x);
        }
        let mut d = 0;
        while d < k {
            idx[d] += 1;
            if idx[d] < per_axis {
                break;
            }
            idx[d] = 0;
            d += 1;
        }
        if d == k {
            break;
        }
    }
    if best.0.is_finite() {
        let phi = (5f64.sqrt() - 1.0) / 2.0;
        for _ in 0..ROUNDS {
            for d in 0..k {
                let cell = (specs[d].2 - specs[d].1) / (per_axis - 1) as f64;
                let mut a = (best.1[d] - cell).max(specs[d].1);
                let mut b = (best.1[d] + cell).min(specs[d].2);
                let at = |v: f64, ev: &mut Evaluator| {
                    let mut x = best.1.clone();
                    x[d] = v;
                    ev.loss(&x)
                };
                let mut c = b - phi * (b - a);
                let mut e = a + phi * (b - a);
                let mut fc = at(c, &mut ev);
                let mut fe = at(e, &mut ev);
                for _ in 0..GOLDEN_STEPS {
                    if fc < fe {
                        b = e;
                        e = c;
                        fe = fc;
                        c = b - phi * (b - a);
                        fc = at(c, &mut ev);
                    } else {
                        a = c;
                        c = e;
                        fc = fe;
                        e = a + phi * (b - a);
                        fe = at(e, &mut ev);
                    }
                }
                let (v, f) = if fc < fe { (c, fc) } else { (e, fe) };
                if f < best.0 {
                    best.0 = f;
                    best.1[d] = v;
                }
            }
        }
    }
    // Whether the best point borders the region without a unique stable solution: a step of
    // EDGE_STEP of the range to either side (inside the bounds) has no loss.
    let mut edge = vec![false; k];
    if best.0.is_finite() {
        for d in 0..k {
            let step = EDGE_STEP * (specs[d].2 - specs[d].1);
            for v in [best.1[d] - step, best.1[d] + step] {
                if v >= specs[d].1 && v <= specs[d].2 {
                    let mut x = best.1.clone();
                    x[d] = v;
                    if !ev.loss(&x).is_finite() {
                        edge[d] = true;
                    }
                }
            }
        }
    }
    Ok(TunedView {
        edge,
        parameters: specs
            .iter()
            .zip(&best.1)
            .map(|((n, lo, hi), v)| (n.clone(), *v, *lo, *hi))
            .collect(),
        expected_loss: best.0.is_finite().then_some(best.0),
        evaluations: ev.evaluations,
        infeasible: ev.infeasible,
        method: format!(
            "grid of {per_axis} points per parameter, then {ROUNDS} rounds of golden-section search per parameter within the best grid cell"
        ),
    })
}

pub fn run(args: OptimizeArgs) -> Result<Outcome, Failure> {
    let settings = SolveSettings::from_args(&args.solve)?;
    if settings.regime != Regime::Rule {
        return Err(Failure::usage(
            "optimize solves every regime itself; --regime does not apply",
        ));
    }
    if args.format == Format::Csv {
        return Err(Failure::usage(
            "optimize prints text or JSON (--format text|json); it has no single table for CSV",
        ));
    }
    let specs = args
        .tune
        .iter()
        .map(|s| parse_tune(s))
        .collect::<Result<Vec<_>, _>>()?;
    if specs.len() > MAX_TUNED {
        return Err(Failure::usage(format!(
            "--tune: at most {MAX_TUNED} parameters at once"
        )));
    }
    let t0 = Instant::now();
    let (model, source) = load_model(&args.file)?;
    let model = apply_overrides(model, &settings.overrides)?;
    let mut prov = provenance(&args.file, &source, &model, &settings, None);
    prov.regime = "all".into();
    let objective = model.objective.as_ref().ok_or_else(|| {
        Failure::new(
            Outcome::ModelError,
            "the model has no objective section, so it has no optimal policy",
        )
    })?;
    let controls: Vec<usize> = objective.controls.iter().map(|c| c.variable).collect();
    let opts = options(&settings);
    let params = PolicyParams::default();
    let mut results = Vec::new();
    let mut first_error = None;
    for regime in [Regime::Rule, Regime::Commitment, Regime::Discretion] {
        match solve_regime(&model, regime, &opts, &params) {
            Ok(r) => results.push((regime, Ok(r))),
            Err(e) => {
                let f = policy_failure(e);
                // A wrong objective is wrong for every regime: no side-by-side output.
                if f.outcome == Outcome::ModelError {
                    return Err(f);
                }
                if regime != Regime::Rule && first_error.is_none() {
                    first_error = Some(f.outcome);
                }
                results.push((regime, Err(f.message)))
            }
        }
    }
    prov.threshold = results.iter().find_map(|(regime, r)| match r {
        Ok(r) if *regime == Regime::Commitment => Some(r.solved.threshold),
        _ => None,
    });
    let tuned = if specs.is_empty() {
        None
    } else {
        Some(tune(&model, opts, &specs)?)
    };
    let views = regime_views(&results, &controls);
    let text = match args.format {
        Format::Json => optimize_json(&views, tuned.as_ref(), &prov),
        _ => optimize_text(model.title.as_deref(), &views, tuned.as_ref(), &prov),
    };
    emit(args.out.output.as_deref(), text.as_bytes())?;
    if settings.timings {
        eprintln_quiet(&format!(
            "optimize: {:.3} ms in all",
            t0.elapsed().as_secs_f64() * 1e3
        ));
    }
    Ok(match first_error {
        Some(o) => o,
        None => Outcome::Success,
    })
}

/// The renderers' view of each regime's result (a solution, or why there is none), shared by
/// `optimize` and the report's policy section.
pub(super) fn regime_views<'a>(
    results: &'a [(Regime, Result<saddle::policy::RegimeSolution, String>)],
    controls: &'a [usize],
) -> Vec<RegimeView<'a>> {
    results
        .iter()
        .map(|(regime, r)| RegimeView {
            regime: *regime,
            result: match r {
                Ok(r) => Ok(RegimeData {
                    solved: &r.solved,
                    expected_loss: r.expected_loss,
                    multipliers: &r.multipliers,
                    controls,
                }),
                Err(e) => Err(e.clone()),
            },
        })
        .collect()
}
