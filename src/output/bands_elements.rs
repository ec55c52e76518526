//! The elements of each command's answer that get posterior bands ([`super::bands`]): the same
//! cells as the command's tidy CSV and the same paths as its JSON, listed in one fixed order so
//! that the value at the calibration and at every draw line up.
//!
//! - `irf`: every response (`shock,variable,period`; JSON `[shock][variable][period]`).
//! - `moments`: `std`, `correlation`, `autocorrelation`, `variance_share` and `fevd_share`
//!   (`statistic,variable,against,horizon`, as `moments --format csv`).
//! - `filter`: the log-likelihood, the filtered and smoothed variables and the smoothed
//!   innovations (`period,kind,name`; JSON `[kind][name][t]`).
//! - `forecast`: the mean and sd of every forecast series (`period,kind,name`).

use nalgebra::DMatrix;

use super::bands::{Element, Seg};
use crate::analysis::irf::ImpulseResponses;
use crate::analysis::moments::Moments;
use crate::data::run::{FilterResults, ForecastResults};

fn key(s: &str) -> Seg {
    Seg::Key(s.to_string())
}

/// CSV key columns of [`irf`].
pub const IRF_COLUMNS: [&str; 3] = ["shock", "variable", "period"];
/// CSV key columns of [`moments`].
pub const MOMENTS_COLUMNS: [&str; 4] = ["statistic", "variable", "against", "horizon"];
/// CSV key columns of [`filter`] and [`forecast`].
pub const DATA_COLUMNS: [&str; 3] = ["period", "kind", "name"];

/// Every response of `r`.
pub fn irf(r: &ImpulseResponses) -> Vec<Element> {
    let mut out = Vec::new();
    for (k, s) in r.shocks.iter().enumerate() {
        let m = &r.responses[k];
        for (i, v) in r.variables.iter().enumerate() {
            for h in 0..m.ncols() {
                out.push(Element {
                    keys: vec![s.clone(), v.clone(), h.to_string()],
                    path: vec![key(s), key(v), Seg::Index(h)],
                    value: m[(i, h)],
                });
            }
        }
    }
    out
}

/// The moments of `m` (undefined ones NaN).
pub fn moments(m: &Moments) -> Vec<Element> {
    let mut out = Vec::new();
    let mut push = |keys: [&str; 4], path: Vec<Seg>, value: f64| {
        out.push(Element {
            keys: keys.iter().map(|s| s.to_string()).collect(),
            path,
            value,
        })
    };
    for (i, v) in m.variables.iter().enumerate() {
        push(
            ["std", v, "", ""],
            vec![key("std"), key(v)],
            m.std[i].unwrap_or(f64::NAN),
        );
    }
    for (i, v) in m.variables.iter().enumerate() {
        for (k, w) in m.variables.iter().enumerate() {
            push(
                ["correlation", v, w, ""],
                vec![key("correlation"), Seg::Index(i), Seg::Index(k)],
                m.correlation[(i, k)],
            );
        }
    }
    for (i, v) in m.variables.iter().enumerate() {
        for (lag, a) in m.autocorrelation[i].iter().enumerate() {
            let l = (lag + 1).to_string();
            push(
                ["autocorrelation", v, "", &l],
                vec![key("autocorrelation"), key(v), Seg::Index(lag)],
                *a,
            );
        }
    }
    for (i, v) in m.variables.iter().enumerate() {
        for (j, s) in m.shocks.iter().enumerate() {
            push(
                ["variance_share", v, s, ""],
                vec![key("variance_decomposition"), key(v), key(s)],
                m.variance_decomposition[i][j],
            );
        }
    }
    for (n, (h, rows)) in m.fevd.iter().enumerate() {
        let hs = h.to_string();
        for (i, v) in m.variables.iter().enumerate() {
            for (j, s) in m.shocks.iter().enumerate() {
                push(
                    ["fevd_share", v, s, &hs],
                    vec![key("fevd"), Seg::Index(n), key("shares"), key(v), key(s)],
                    rows[i][j],
                );
            }
        }
    }
    out
}

fn tidy(
    out: &mut Vec<Element>,
    periods: &[String],
    kind: &str,
    json: &str,
    names: &[String],
    m: &DMatrix<f64>,
) {
    for (j, name) in names.iter().enumerate() {
        for (t, p) in periods.iter().enumerate() {
            out.push(Element {
                keys: vec![p.clone(), kind.to_string(), name.clone()],
                path: vec![key(json), key(name), Seg::Index(t)],
                value: if t < m.nrows() && j < m.ncols() {
                    m[(t, j)]
                } else {
                    f64::NAN
                },
            });
        }
    }
}

/// The log-likelihood, filtered and smoothed variables and smoothed innovations of `r` over
/// `periods`, for `variables` and `shocks` (the columns of `r`'s matrices).
pub fn filter(
    periods: &[String],
    variables: &[String],
    shocks: &[String],
    r: &FilterResults,
) -> Vec<Element> {
    let mut out = vec![Element {
        keys: vec![String::new(), "loglik".into(), String::new()],
        path: vec![key("loglik")],
        value: r.loglik,
    }];
    tidy(
        &mut out,
        periods,
        "filtered",
        "filtered",
        variables,
        &r.filtered,
    );
    tidy(
        &mut out,
        periods,
        "smoothed",
        "smoothed",
        variables,
        &r.smoothed,
    );
    tidy(
        &mut out,
        periods,
        "smoothed_shock",
        "smoothed_shocks",
        shocks,
        &r.smoothed_shocks,
    );
    out
}

/// The mean and sd of every forecast series of `r` over the future `periods`.
pub fn forecast(periods: &[String], r: &ForecastResults) -> Vec<Element> {
    let mut out = Vec::new();
    tidy(&mut out, periods, "mean", "mean", &r.names, &r.mean);
    tidy(&mut out, periods, "sd", "sd", &r.names, &r.sd);
    out
}
