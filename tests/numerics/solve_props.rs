//! No model may crash the solver: random small models (random leads, lags, functions and
//! coefficients, including zeros and extreme magnitudes) either solve, with a plug-back residual
//! below 1e-10 when determinate, or fail with an error; never a panic.

use proptest::prelude::*;
use saddle::model::check_source;
use saddle::solution::{PreparedModel, SolveOptions, Status};

fn term() -> impl Strategy<Value = String> {
    let coef = prop_oneof![
        Just("0".to_string()),
        Just("1".to_string()),
        Just("-1".to_string()),
        Just("1e-12".to_string()),
        Just("1e12".to_string()),
        (-30i32..30).prop_map(|k| format!("{}", k as f64 / 10.0)),
    ];
    let offset = prop_oneof![
        Just("".to_string()),
        Just("[t+1]".to_string()),
        Just("[t-1]".to_string()),
        Just("[t+2]".to_string()),
        Just("[t-2]".to_string()),
    ];
    let func = prop_oneof![
        Just(("", "")),
        Just(("exp(", ")")),
        Just(("ln(1 + ", "^2)")),
        Just(("abs(", ")")),
        Just(("max(", ", 0)")),
        Just(("sqrt(1 + ", "^2)")),
    ];
    (coef, 0usize..3, offset, func).prop_map(|(c, v, o, (f0, f1))| format!("{c} * {f0}x{v}{o}{f1}"))
}

fn model_text() -> impl Strategy<Value = String> {
    proptest::collection::vec(proptest::collection::vec(term(), 1..4), 3..=3).prop_map(|eqs| {
        let mut s = String::from("endogenous\n x0, x1, x2\nexogenous\n e\nequations\n");
        for (i, terms) in eqs.iter().enumerate() {
            // Each variable appears in its own equation at t, so the model checks.
            s.push_str(&format!(" x{i} = {} + e\n", terms.join(" + ")));
        }
        s
    })
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(300))]
    #[test]
    fn random_models_never_panic(src in model_text()) {
        if let Ok(m) = check_source(&src) {
            let prepared = PreparedModel::new(&m).unwrap();
            if let Ok(d) = prepared.solve_detailed(&m, &SolveOptions::default()) {
                if d.solved.status == Status::Determinate {
                    // Either accurate, or the inaccuracy was said out loud.
                    let r = d.max_residual.unwrap();
                    prop_assert!(r <= 1e-10 || d.solved.warnings.iter().any(|w| w.contains("residual")), "{src}: {r}");
                } else {
                    prop_assert!(d.solved.diagnosis.is_some());
                }
            }
        }
    }
}
