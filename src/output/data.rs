//! Renderings of the data commands (cli.md "Data commands"): `filter`, `decompose` and
//! `forecast` as aligned text, JSON with provenance (model file and data file with their
//! sha256) and tidy CSV `period,kind,name,value`.
//!
//! ```text
//!   filter   : smoothed_t = E[yhat_t | all data],  filtered_t = E[yhat_t | data to t]
//!   decompose: smoothed_t = initial_t + sum_j contribution_{j,t}
//!   forecast : mean and sd of yhat_{N+h} (deviations) and o_{N+h} (data units)
//! ```
//!
//! Pure functions of library values; nothing here computes numerics or touches files.

use nalgebra::DMatrix;

use super::csv;
use super::ordered_json::Json;
use super::table::{number, Align, Table};
use crate::data::run::{DecompositionResults, FilterResults, ForecastResults};

/// The closing sentence of every text output of the data commands.
pub const CONDITIONAL: &str = "Results are conditional on the model, its calibration and its data.";

/// The likelihood convention, in one sentence for outputs.
pub const LIKELIHOOD_CONVENTION: &str = "exact Gaussian log-likelihood of every used observation, -0.5 log(2 pi) terms included; states started from their unconditional distribution; observations that resolve unit-root (diffuse) states are left out";

pub use super::provenance::Provenance;

/// Names, labels and periods shared by the renderings.
#[derive(Debug, Clone, PartialEq)]
pub struct Names {
    pub title: Option<String>,
    pub periods: Vec<String>,
    pub variables: Vec<String>,
    pub shocks: Vec<String>,
    pub observables: Vec<String>,
    /// Per variable: linearized in logs (its deviations are log deviations).
    pub log: Vec<bool>,
}

fn pairs(v: &[(String, f64)]) -> Json {
    Json::Object(
        v.iter()
            .map(|(k, x)| (k.clone(), Json::Number(*x)))
            .collect(),
    )
}

/// The `provenance` object.
pub fn provenance_json(p: &Provenance) -> Json {
    let num = |x: Option<f64>| x.map_or(Json::Null, Json::Number);
    let mut fields = vec![
        ("file".into(), Json::String(p.file.clone())),
        ("sha256".into(), Json::String(p.sha256.clone())),
        ("version".into(), Json::String(p.version.to_string())),
        ("overrides".into(), pairs(&p.overrides)),
        ("parameters".into(), pairs(&p.parameters)),
        ("threshold".into(), num(p.threshold)),
        ("regime".into(), Json::String(p.regime.clone())),
    ];
    if let Some((file, sha)) = &p.data {
        fields.push(("data_file".into(), Json::String(file.clone())));
        fields.push(("data_sha256".into(), Json::String(sha.clone())));
    }
    if !p.draws.is_empty() {
        let d = p
            .draws
            .iter()
            .map(|(f, sha)| {
                Json::Object(vec![
                    ("file".into(), Json::String(f.clone())),
                    ("sha256".into(), Json::String(sha.clone())),
                ])
            })
            .collect();
        fields.push(("draws".into(), Json::Array(d)));
    }
    Json::Object(fields)
}

/// One line naming the model file, the data file, their hashes and the overrides.
pub fn provenance_line(p: &Provenance) -> String {
    p.text_line()
}

/// `{name: [column]}` for the columns of `m` (rows are periods).
fn by_column(names: &[String], m: &DMatrix<f64>) -> Json {
    Json::Object(
        names
            .iter()
            .enumerate()
            .map(|(j, n)| {
                let col: Vec<f64> = m.column(j).iter().copied().collect();
                (n.clone(), Json::numbers(&col))
            })
            .collect(),
    )
}

fn strings(v: &[String]) -> Json {
    Json::Array(v.iter().map(|s| Json::String(s.clone())).collect())
}

fn header(out: &mut String, names: &Names, what: &str, prov: &Provenance) {
    if let Some(t) = &names.title {
        out.push_str(t);
        out.push('\n');
    }
    out.push_str(what);
    out.push('\n');
    out.push_str(&provenance_line(prov));
    out.push_str("\n\n");
}

fn indent(out: &mut String, table: &Table) {
    for l in table.render().lines() {
        out.push_str("  ");
        out.push_str(l);
        out.push('\n');
    }
}

/// A table with a period column and one column per name of `m`'s columns.
fn period_table(periods: &[String], cols: &[String], m: &DMatrix<f64>, digits: usize) -> Table {
    let mut head: Vec<&str> = vec!["period"];
    head.extend(cols.iter().map(|s| s.as_str()));
    let mut align = vec![Align::Left];
    align.extend(vec![Align::Right; cols.len()]);
    let mut t = Table::new(&head, &align);
    for (i, p) in periods.iter().enumerate() {
        let mut row = vec![p.clone()];
        row.extend((0..cols.len()).map(|j| {
            let v = m[(i, j)];
            if v.is_nan() {
                "-".to_string()
            } else {
                number(v, digits)
            }
        }));
        t.row(row);
    }
    t
}

fn deviations_note(names: &Names) -> &'static str {
    if names.log.iter().any(|l| *l) {
        "deviations from the steady state (log deviations for log variables: 0.01 = one percent)"
    } else {
        "deviations from the steady state"
    }
}

// ----- filter -----

/// Text: the likelihood with its convention, smoothed variables with their standard
/// deviations, smoothed innovations and one-step prediction errors.
pub fn filter_text(names: &Names, r: &FilterResults, prov: &Provenance) -> String {
    let mut out = String::new();
    header(&mut out, names, "Kalman filter and smoother", prov);
    out.push_str(&format!(
        "Log-likelihood {} over {} periods: {} observations used",
        number(r.loglik, 4),
        names.periods.len(),
        r.n_used
    ));
    if r.n_diffuse > 0 {
        out.push_str(&format!(
            ", {} left out (the observation{} that pin{} down the {} unit-root direction{} of the state: exact diffuse start)",
            r.n_diffuse,
            if r.n_diffuse == 1 { "" } else { "s" },
            if r.n_diffuse == 1 { "s" } else { "" },
            r.diffuse_rank,
            if r.diffuse_rank == 1 { "" } else { "s" }
        ));
    }
    if r.n_skipped > 0 {
        out.push_str(&format!(
            ", {} skipped as exact combinations of other observations",
            r.n_skipped
        ));
    }
    out.push_str(".\n");
    out.push_str(&format!(
        "The log-likelihood is the {LIKELIHOOD_CONVENTION}.\n"
    ));
    out.push_str(&format!(
        "\nSmoothed variables, E[y_t | all data], in {}\n",
        deviations_note(names)
    ));
    indent(
        &mut out,
        &period_table(&names.periods, &names.variables, &r.smoothed, 4),
    );
    out.push_str("\nStandard deviations of the smoothed variables\n");
    indent(
        &mut out,
        &period_table(&names.periods, &names.variables, &r.smoothed_sd, 4),
    );
    out.push_str("\nSmoothed innovations, E[e_t | all data]\n");
    indent(
        &mut out,
        &period_table(&names.periods, &names.shocks, &r.smoothed_shocks, 4),
    );
    out.push_str(
        "\nOne-step prediction errors, data minus E[data_t | data to t-1], in data units (- where missing)\n",
    );
    indent(
        &mut out,
        &period_table(&names.periods, &names.observables, &r.prediction_errors, 4),
    );
    out.push('\n');
    out.push_str(CONDITIONAL);
    out.push('\n');
    out
}

/// JSON of cli.md: `loglik, periods, filtered, smoothed, smoothed_sd, smoothed_shocks,
/// prediction_errors, provenance`, plus `smoothed_shocks_sd`, `smoothed_observables` and
/// `likelihood` (counts and convention).
pub fn filter_json(names: &Names, r: &FilterResults, prov: &Provenance) -> String {
    Json::Object(vec![
        ("loglik".into(), Json::Number(r.loglik)),
        ("periods".into(), strings(&names.periods)),
        ("filtered".into(), by_column(&names.variables, &r.filtered)),
        ("smoothed".into(), by_column(&names.variables, &r.smoothed)),
        (
            "smoothed_sd".into(),
            by_column(&names.variables, &r.smoothed_sd),
        ),
        (
            "smoothed_shocks".into(),
            by_column(&names.shocks, &r.smoothed_shocks),
        ),
        (
            "smoothed_shocks_sd".into(),
            by_column(&names.shocks, &r.smoothed_shocks_sd),
        ),
        (
            "prediction_errors".into(),
            by_column(&names.observables, &r.prediction_errors),
        ),
        (
            "smoothed_observables".into(),
            by_column(&names.observables, &r.smoothed_observables),
        ),
        (
            "likelihood".into(),
            Json::Object(vec![
                ("observations_used".into(), Json::Integer(r.n_used as i64)),
                (
                    "diffuse_observations_left_out".into(),
                    Json::Integer(r.n_diffuse as i64),
                ),
                (
                    "skipped_exact_combinations".into(),
                    Json::Integer(r.n_skipped as i64),
                ),
                ("diffuse_rank".into(), Json::Integer(r.diffuse_rank as i64)),
                (
                    "convention".into(),
                    Json::String(LIKELIHOOD_CONVENTION.into()),
                ),
            ]),
        ),
        ("provenance".into(), provenance_json(prov)),
    ])
    .to_pretty_string()
}

fn tidy(out: &mut String, periods: &[String], kind: &str, cols: &[String], m: &DMatrix<f64>) {
    for (j, name) in cols.iter().enumerate() {
        for (t, p) in periods.iter().enumerate() {
            csv::record(out, &[p, kind, name, &csv::number(m[(t, j)])]);
        }
    }
}

/// Tidy CSV `period,kind,name,value`; kinds `filtered`, `smoothed`, `smoothed_sd` (variables),
/// `smoothed_shock`, `smoothed_shock_sd` (innovations), `prediction_error`,
/// `smoothed_observable` (observables; `NaN` where the data are missing).
pub fn filter_csv(names: &Names, r: &FilterResults) -> String {
    let mut out = String::new();
    csv::record(&mut out, &["period", "kind", "name", "value"]);
    let p = &names.periods;
    tidy(&mut out, p, "filtered", &names.variables, &r.filtered);
    tidy(&mut out, p, "smoothed", &names.variables, &r.smoothed);
    tidy(&mut out, p, "smoothed_sd", &names.variables, &r.smoothed_sd);
    tidy(
        &mut out,
        p,
        "smoothed_shock",
        &names.shocks,
        &r.smoothed_shocks,
    );
    tidy(
        &mut out,
        p,
        "smoothed_shock_sd",
        &names.shocks,
        &r.smoothed_shocks_sd,
    );
    tidy(
        &mut out,
        p,
        "prediction_error",
        &names.observables,
        &r.prediction_errors,
    );
    tidy(
        &mut out,
        p,
        "smoothed_observable",
        &names.observables,
        &r.smoothed_observables,
    );
    out
}

// ----- decompose -----

fn contribution_columns(names: &Names) -> Vec<String> {
    let mut c = names.shocks.clone();
    c.push("initial".into());
    c
}

/// Text: per variable a table of its smoothed value and the contribution of each innovation
/// and of the initial state.
pub fn decompose_text(names: &Names, r: &DecompositionResults, prov: &Provenance) -> String {
    let mut out = String::new();
    header(
        &mut out,
        names,
        "Historical decomposition of the smoothed variables",
        prov,
    );
    out.push_str(&format!(
        "Each smoothed variable, in {}, is the sum of the contributions of the smoothed innovations and of the smoothed initial state (column `initial`).\n",
        deviations_note(names)
    ));
    let cols = contribution_columns(names);
    let mut head = vec!["smoothed".to_string()];
    head.extend(cols.iter().cloned());
    for (i, v) in names.variables.iter().enumerate() {
        let c = &r.contributions[i];
        let mut m = DMatrix::zeros(c.nrows(), c.ncols() + 1);
        m.column_mut(0).copy_from(&r.smoothed.column(i));
        m.view_mut((0, 1), (c.nrows(), c.ncols())).copy_from(c);
        out.push_str(&format!("\n{v}\n"));
        indent(&mut out, &period_table(&names.periods, &head, &m, 4));
    }
    out.push('\n');
    out.push_str(CONDITIONAL);
    out.push('\n');
    out
}

/// JSON of cli.md: `periods`, `contributions[VAR][SHOCK | "initial"]`, plus `smoothed` and
/// `provenance`.
pub fn decompose_json(names: &Names, r: &DecompositionResults, prov: &Provenance) -> String {
    let cols = contribution_columns(names);
    let contributions = Json::Object(
        names
            .variables
            .iter()
            .zip(&r.contributions)
            .map(|(v, c)| (v.clone(), by_column(&cols, c)))
            .collect(),
    );
    Json::Object(vec![
        ("periods".into(), strings(&names.periods)),
        ("contributions".into(), contributions),
        ("smoothed".into(), by_column(&names.variables, &r.smoothed)),
        ("provenance".into(), provenance_json(prov)),
    ])
    .to_pretty_string()
}

/// Tidy CSV `period,kind,name,value` with `name` the variable and `kind` one of `smoothed`,
/// `initial` or `shock:NAME` (the contribution of innovation NAME).
pub fn decompose_csv(names: &Names, r: &DecompositionResults) -> String {
    let mut out = String::new();
    csv::record(&mut out, &["period", "kind", "name", "value"]);
    let kinds: Vec<String> = names
        .shocks
        .iter()
        .map(|s| format!("shock:{s}"))
        .chain(std::iter::once("initial".to_string()))
        .collect();
    for (i, v) in names.variables.iter().enumerate() {
        for (t, p) in names.periods.iter().enumerate() {
            csv::record(
                &mut out,
                &[p, "smoothed", v, &csv::number(r.smoothed[(t, i)])],
            );
            for (j, k) in kinds.iter().enumerate() {
                csv::record(
                    &mut out,
                    &[p, k, v, &csv::number(r.contributions[i][(t, j)])],
                );
            }
        }
    }
    out
}

// ----- forecast -----

/// The `--fix` conditions as given: observable name and its values for the first periods.
pub type Conditions = [(String, Vec<f64>)];

/// Text: observables (data units) then variables (deviations), mean and sd per period.
pub fn forecast_text(
    names: &Names,
    periods: &[String],
    r: &ForecastResults,
    fixed: &Conditions,
    prov: &Provenance,
) -> String {
    let mut out = String::new();
    header(
        &mut out,
        names,
        &format!(
            "Forecasts {} period{} past the data",
            periods.len(),
            if periods.len() == 1 { "" } else { "s" }
        ),
        prov,
    );
    if fixed.is_empty() {
        out.push_str("Unconditional: given the data only.\n");
    } else {
        out.push_str("Conditional on the data and on these future values (measurement error included, exact Gaussian conditioning):\n");
        for (n, v) in fixed {
            let vs: Vec<String> = v.iter().map(|x| format!("{x}")).collect();
            out.push_str(&format!(
                "  {n} = {} for {}\n",
                vs.join(", "),
                periods[..v.len().min(periods.len())].join(", ")
            ));
        }
    }
    for (obs, what) in [
        (
            true,
            "Observables, in data units (sd includes measurement error)".to_string(),
        ),
        (false, format!("Variables, in {}", deviations_note(names))),
    ] {
        let cols: Vec<usize> = (0..r.names.len())
            .filter(|&j| r.is_observable[j] == obs)
            .collect();
        if cols.is_empty() {
            continue;
        }
        out.push_str(&format!("\n{what}: mean (sd)\n"));
        let mut head: Vec<&str> = vec!["period"];
        head.extend(cols.iter().map(|&j| r.names[j].as_str()));
        let mut align = vec![Align::Left];
        align.extend(vec![Align::Right; cols.len()]);
        let mut t = Table::new(&head, &align);
        for (h, p) in periods.iter().enumerate() {
            let mut row = vec![p.clone()];
            row.extend(cols.iter().map(|&j| {
                format!(
                    "{} ({})",
                    number(r.mean[(h, j)], 4),
                    number(r.sd[(h, j)], 4)
                )
            }));
            t.row(row);
        }
        indent(&mut out, &t);
    }
    out.push('\n');
    out.push_str(CONDITIONAL);
    out.push('\n');
    out
}

/// JSON of cli.md: `periods`, `mean[NAME]`, `sd[NAME]`, plus `observables` (which names are in
/// data units), `fixed` (the conditions) and `provenance`.
pub fn forecast_json(
    periods: &[String],
    r: &ForecastResults,
    fixed: &Conditions,
    prov: &Provenance,
) -> String {
    let obs: Vec<String> = r
        .names
        .iter()
        .zip(&r.is_observable)
        .filter(|(_, o)| **o)
        .map(|(n, _)| n.clone())
        .collect();
    Json::Object(vec![
        ("periods".into(), strings(periods)),
        ("mean".into(), by_column(&r.names, &r.mean)),
        ("sd".into(), by_column(&r.names, &r.sd)),
        ("observables".into(), strings(&obs)),
        (
            "fixed".into(),
            Json::Object(
                fixed
                    .iter()
                    .map(|(n, v)| (n.clone(), Json::numbers(v)))
                    .collect(),
            ),
        ),
        ("provenance".into(), provenance_json(prov)),
    ])
    .to_pretty_string()
}

/// Tidy CSV `period,kind,name,value` with kinds `mean` and `sd`.
pub fn forecast_csv(periods: &[String], r: &ForecastResults) -> String {
    let mut out = String::new();
    csv::record(&mut out, &["period", "kind", "name", "value"]);
    tidy(&mut out, periods, "mean", &r.names, &r.mean);
    tidy(&mut out, periods, "sd", &r.names, &r.sd);
    out
}
