//! Equations written in very different units must not change the solution: multiplying an
//! equation by a constant leaves its roots and its solution unchanged (common practice: the
//! canonical form's rows may be scaled freely), so the harbour economy with one equation scaled
//! by 1e-20 and another by 1e+20 must give the same decision rule as the file as written.

use saddle::model::check_source;
use saddle::solution::{solve, SolveOptions};

const HARBOUR: &str = include_str!("../../models/harbour.saddle");

fn rule(source: &str) -> (saddle::solution::Status, Vec<f64>) {
    let model = check_source(source).unwrap_or_else(|d| panic!("model does not check: {d:?}"));
    let solved = solve(&model, &SolveOptions::default()).unwrap();
    let space = solved.solution.as_ref().expect("determinate");
    let mut v: Vec<f64> = space.p.iter().copied().collect();
    v.extend(space.q.iter().copied());
    (solved.status, v)
}

#[test]
fn rows_scaled_by_1e20_give_the_same_solution() {
    let supply = "supply: infl = beta * infl[t+1] + kappa * gap + e_cost";
    let inert = "inert:  drift = rho * drift[t-1] + e_rate";
    assert!(
        HARBOUR.contains(supply) && HARBOUR.contains(inert),
        "demo model changed"
    );
    let scaled = HARBOUR
        .replace(
            supply,
            "supply: 1e-20 * infl = 1e-20 * (beta * infl[t+1] + kappa * gap + e_cost)",
        )
        .replace(
            inert,
            "inert:  1e20 * drift = 1e20 * (rho * drift[t-1] + e_rate)",
        );
    let (s0, r0) = rule(HARBOUR);
    let (s1, r1) = rule(&scaled);
    assert_eq!(s0, s1);
    assert_eq!(r0.len(), r1.len());
    for (a, b) in r0.iter().zip(&r1) {
        assert!((a - b).abs() <= 1e-12 * (1.0 + a.abs()), "{a} vs {b}");
    }
}
