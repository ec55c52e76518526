//! The HTML report on a hand-built solved model (the harbour demo economy's shape, with an
//! invented decision rule): self-contained, every section present, text escaped, tables sortable,
//! and a model without a unique stable solution still gets its roots and diagnosis.
//!
//! With `SADDLE_GALLERY=DIR` set, the pages are also written to DIR for rendering and looking.

use nalgebra::DMatrix;
use saddle::model::{Endogenous, Equation, Exogenous, Expr, Model, ModelOptions, Parameter};
use saddle::output::report::{render, IrfView, MomentsView, ReportInput};
use saddle::solution::{Counts, Root, SolvedModel, StateSpace, Status};

fn keep(name: &str, html: &str) {
    if let Ok(dir) = std::env::var("SADDLE_GALLERY") {
        std::fs::create_dir_all(&dir).unwrap();
        std::fs::write(std::path::Path::new(&dir).join(name), html).unwrap();
    }
}

fn param(name: &str, value: f64, label: Option<&str>, derived: bool) -> Parameter {
    Parameter {
        name: name.to_string(),
        label: label.map(String::from),
        expr: if derived {
            Expr::Parameter(0)
        } else {
            Expr::Number(value)
        },
        value,
    }
}

fn harbour_model() -> Model {
    let var = |n: &str, l: &str, lead: u32, lag: u32| Endogenous {
        name: n.to_string(),
        label: Some(l.to_string()),
        log: false,
        max_lead: lead,
        max_lag: lag,
        predetermined: false,
    };
    Model {
        title: Some("Harbour economy: output gap, inflation & the policy rate".to_string()),
        endogenous: vec![
            var("gap", "output gap, percent", 1, 0),
            var("infl", "inflation, quarterly percent", 1, 0),
            var("rate", "policy rate, quarterly percent", 0, 0),
            var("drift", "rule disturbance", 0, 1),
        ],
        exogenous: vec![
            Exogenous {
                name: "e_rate".to_string(),
                label: Some("policy surprise".to_string()),
                max_lag: 0,
            },
            Exogenous {
                name: "e_cost".to_string(),
                label: Some("cost-push impulse <shock>".to_string()),
                max_lag: 0,
            },
        ],
        parameters: vec![
            param("beta", 0.99, Some("discount factor"), false),
            param(
                "sigma",
                1.5,
                Some("inverse elasticity of intertemporal substitution"),
                false,
            ),
            param(
                "theta",
                0.7,
                Some("share of prices kept unchanged each quarter"),
                false,
            ),
            param("omega", 1.2, None, false),
            param("kappa", 0.1717, None, true),
            param("phi_pi", 1.6, None, false),
            param("phi_y", 0.2, None, false),
            param("rho", 0.6, None, false),
        ],
        parameter_order: (0..8).collect(),
        equations: (0..4)
            .map(|i| Equation {
                label: Some(format!("eq{i}")),
                lhs: Expr::Number(0.0),
                rhs: Expr::Number(0.0),
            })
            .collect(),
        covariance_items: vec![],
        covariance: DMatrix::from_row_slice(2, 2, &[0.0625, 0.0, 0.0, 0.01]),
        sd_given: vec![true, true],
        steady: vec![],
        options: ModelOptions::default(),
        observables: Vec::new(),
        measurement_items: Vec::new(),
        measurement_covariance: DMatrix::zeros(0, 0),
        priors: Vec::new(),
        objective: None,
    }
}

fn root(re: f64, im: f64, stable: bool) -> Root {
    Root {
        re,
        im,
        modulus: Some(re.hypot(im)),
        infinite: false,
        stable,
        boundary: false,
    }
}

/// An invented decision rule of the right shape: one state (drift[t-1]) with persistence 0.6.
fn harbour_solved() -> SolvedModel {
    let p = DMatrix::from_column_slice(4, 1, &[-0.412, -0.0871, 0.1103, 0.6]);
    let q = DMatrix::from_row_slice(
        4,
        2,
        &[-0.687, -0.321, -0.145, 0.874, 0.184, 1.334, 1.0, 0.0],
    );
    SolvedModel {
        title: None,
        status: Status::Determinate,
        threshold: 1.0,
        counts: Counts {
            stable: 1,
            unstable: 2,
            forward_looking: 2,
            predetermined: 1,
        },
        roots: vec![
            root(0.6, 0.0, true),
            root(1.08, 0.21, false),
            root(1.08, -0.21, false),
            Root {
                re: f64::INFINITY,
                im: 0.0,
                modulus: None,
                infinite: true,
                stable: false,
                boundary: false,
            },
        ],
        variables: vec!["gap".into(), "infl".into(), "rate".into(), "drift".into()],
        log: vec![false; 4],
        shocks: vec!["e_rate".into(), "e_cost".into()],
        steady_state: vec![0.0, 0.0, 0.0101, 0.0],
        covariance: DMatrix::from_row_slice(2, 2, &[0.0625, 0.0, 0.0, 0.01]),
        diagnosis: None,
        warnings: vec![],
        solution: Some(StateSpace {
            states: vec!["drift[t-1]".into()],
            p,
            q,
            g: DMatrix::from_element(1, 1, 0.6),
            h: DMatrix::from_row_slice(1, 2, &[1.0, 0.0]),
        }),
    }
}

/// Impulse responses from the state space: x_0 = Q e, x_h = P G^(h-1) H e (one-sd impulses).
fn responses(s: &SolvedModel, horizon: usize) -> Vec<DMatrix<f64>> {
    let ss = s.solution.as_ref().unwrap();
    (0..s.shocks.len())
        .map(|k| {
            let size = s.covariance[(k, k)].sqrt();
            let mut out = DMatrix::zeros(s.variables.len(), horizon + 1);
            let mut state = ss.h.column(k) * size;
            for i in 0..s.variables.len() {
                out[(i, 0)] = ss.q[(i, k)] * size;
            }
            for t in 1..=horizon {
                let y = &ss.p * &state;
                for i in 0..s.variables.len() {
                    out[(i, t)] = y[i];
                }
                state = &ss.g * state;
            }
            out
        })
        .collect()
}

fn input_for<'a>(
    model: &'a Model,
    solved: &'a SolvedModel,
    irf: Option<IrfView<'a>>,
    moments: Option<MomentsView<'a>>,
) -> ReportInput<'a> {
    ReportInput {
        policy_html: None,
        source: "models/harbour.saddle",
        model,
        solved,
        equations: vec![
            "demand: gap = gap[t+1] - (rate - infl[t+1]) / sigma".to_string(),
            "supply: infl = beta * infl[t+1] + kappa * gap + e_cost".to_string(),
            "policy: rate = phi_pi * infl + phi_y * gap + drift".to_string(),
            "inert: drift = rho * drift[t-1] + e_rate".to_string(),
        ],
        definitions: vec![
            None,
            None,
            None,
            None,
            Some("(1 - theta) * (1 - beta * theta) / theta * (sigma + omega)".to_string()),
            None,
            None,
            None,
        ],
        overrides: vec!["phi_pi".to_string()],
        settings: vec![
            (
                "stable-root threshold".to_string(),
                "1 (the default)".to_string(),
            ),
            (
                "impulse size".to_string(),
                "one standard deviation".to_string(),
            ),
            ("horizon".to_string(), "40 periods".to_string()),
        ],
        irf,
        moments,
        irf_error: None,
        moments_error: None,
        version: "0.1.0",
        data_section: None,
        estimation_section: None,
    }
}

/// Every `<section id="...">` in order.
fn section_ids(html: &str) -> Vec<String> {
    html.match_indices("<section id=\"")
        .map(|(i, m)| {
            let rest = &html[i + m.len()..];
            rest[..rest.find('"').unwrap()].to_string()
        })
        .collect()
}

#[test]
fn determinate_report_has_every_section_charts_and_sortable_tables() {
    let model = harbour_model();
    let solved = harbour_solved();
    let resp = responses(&solved, 40);
    let irf = IrfView {
        size: "one-sd",
        horizon: 40,
        shocks: &solved.shocks,
        variables: &solved.variables,
        responses: &resp,
    };
    // Invented moments of the right shape (the report only renders them).
    let std = vec![Some(0.231), Some(0.118), Some(0.201), Some(0.3125)];
    let corr = DMatrix::from_fn(4, 4, |i, j| {
        if i == j {
            1.0
        } else {
            -0.3 + 0.1 * (i + j) as f64
        }
    });
    let ac: Vec<Vec<f64>> = (0..4)
        .map(|_| (1..=5).map(|l| 0.6f64.powi(l)).collect())
        .collect();
    let vd = vec![
        vec![0.7, 0.3],
        vec![0.2, 0.8],
        vec![0.45, 0.55],
        vec![1.0, 0.0],
    ];
    let fevd = vec![(1usize, vd.clone()), (8usize, vd.clone())];
    let warnings = vec!["Innovations are uncorrelated; shares are exact.".to_string()];
    let moments = MomentsView {
        variables: &solved.variables,
        shocks: &solved.shocks,
        std: &std,
        correlation: &corr,
        autocorrelation: &ac,
        variance_decomposition: &vd,
        fevd: &fevd,
        nonstationary: &[],
        warnings: &warnings,
    };
    let html = render(&input_for(&model, &solved, Some(irf), Some(moments)));
    keep("report_harbour.html", &html);

    assert!(html.starts_with("<!DOCTYPE html>"));
    assert_eq!(
        section_ids(&html),
        vec![
            "summary",
            "calibration",
            "steady-state",
            "roots",
            "solution",
            "impulse-responses",
            "moments"
        ]
    );
    // Self-contained: no external resources of any kind.
    for needle in [
        "http://", "https://", "src=", "<link", "@import", "url(http",
    ] {
        let hits: Vec<_> = html
            .match_indices(needle)
            .filter(|(i, _)| !html[*i..].starts_with("http://www.w3.org/2000/svg"))
            .collect();
        assert!(hits.is_empty(), "external reference `{needle}` in the page");
    }
    // Escaped title and labels.
    assert!(html.contains("<h1>Harbour economy: output gap, inflation &amp; the policy rate</h1>"));
    assert!(html.contains("cost-push impulse &lt;shock&gt;"));
    // The caveat is said plainly, at the top and at the bottom.
    assert!(html.contains("conditional on the model and its calibration"));
    assert!(html.contains("Conditional results."));
    // One chart per shock, each a grid with one panel per variable, the shock named.
    assert_eq!(html.matches("<figure class=\"chart\"").count(), 2);
    assert_eq!(html.matches("<g class=\"panel\"").count(), 8);
    assert!(html.contains("impulse in e_rate (policy surprise)"));
    // The root plot.
    assert!(html.contains("class=\"threshold\""));
    assert!(html.contains("1 infinite root (unstable) not drawn."));
    // Solution equations with true minus signs and the state advanced one period.
    assert!(html.contains("<code>gap[t]</code>"));
    assert!(
        html.contains("\u{2212}0.412 drift[t-1] \u{2212} 0.687 e_rate[t] \u{2212} 0.321 e_cost[t]")
    );
    assert!(html.contains("<code>drift[t]</code></td><td class=\"op\">=</td><td><code>0.6 drift[t-1] + 1 e_rate[t]</code>"));
    // Calibration: derived definition and the command-line override are shown.
    assert!(html.contains(
        "derived: <code>(1 - theta) * (1 - beta * theta) / theta * (sigma + omega)</code>"
    ));
    assert!(html.contains("set on the command line"));
    // Tables are sortable with numeric keys; the script is inline.
    assert!(html.contains("class=\"data sortable\""));
    assert!(html.contains("data-sort=\"0.99\""));
    assert!(html.contains("<script>\n(function () {"));
    // Variance decomposition in percent with bars.
    assert!(html.contains("<td class=\"n share\" style=\"--w:70.0%\" data-sort=\"0.7\">70.0</td>"));
    assert!(!html.contains("NaN"));
}

#[test]
fn report_of_an_indeterminate_model_explains_what_is_missing() {
    let model = harbour_model();
    let mut solved = harbour_solved();
    solved.status = Status::Indeterminate;
    solved.counts.unstable = 1;
    solved.counts.stable = 2;
    solved.roots[1] = root(0.95, 0.0, true);
    solved.solution = None;
    solved.diagnosis = Some(
        "Indeterminate: 1 unstable root for 2 forward-looking elements (one too few); with phi_pi = 0.9 the rule does not respond enough to inflation.".to_string(),
    );
    let html = render(&input_for(&model, &solved, None, None));
    keep("report_indeterminate.html", &html);
    assert_eq!(section_ids(&html).len(), 7);
    assert!(html.contains("one too few"));
    assert!(html.contains(
        "No impulse responses: the model has no unique stable solution (status indeterminate)"
    ));
    assert!(html.contains("No moments: the model has no unique stable solution"));
    assert!(html.contains("No solution equations"));
    assert!(!html.contains("<figure class=\"chart\""));
    // Roots are still listed and drawn.
    assert!(html.contains("class=\"threshold\""));
    assert!(html.contains("id=\"t-roots\""));
}

#[test]
fn nonstationary_and_missing_values_render_blank_not_nan() {
    let model = harbour_model();
    let solved = harbour_solved();
    let std = vec![Some(0.2), None, Some(0.1), Some(0.3)];
    let corr = DMatrix::from_element(4, 4, f64::NAN);
    let ac: Vec<Vec<f64>> = vec![vec![0.5, f64::NAN]; 4];
    let vd = vec![vec![f64::NAN, f64::NAN]; 4];
    let nonstationary = vec!["infl".to_string()];
    let moments = MomentsView {
        variables: &solved.variables,
        shocks: &solved.shocks,
        std: &std,
        correlation: &corr,
        autocorrelation: &ac,
        variance_decomposition: &vd,
        fevd: &[],
        nonstationary: &nonstationary,
        warnings: &[],
    };
    let mut input = input_for(&model, &solved, None, Some(moments));
    input.irf_error = Some("the horizon is too long".to_string());
    let html = render(&input);
    assert!(html.contains("The variance does not exist for infl"));
    assert!(html.contains("does not exist"));
    assert!(html.contains("Impulse responses could not be computed: the horizon is too long"));
    assert!(!html.contains("NaN"));
}
