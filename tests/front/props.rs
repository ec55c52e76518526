//! Property tests: no input makes the front end panic, and whatever checks round-trips through
//! the canonical printer. The default run has 12,000 cases (about ten seconds); the ignored
//! tests run 200,000 more (`cargo test --test front_props -- --ignored`).

use proptest::prelude::*;

use saddle::language::{line_col, parse};
use saddle::model::check_source;
use saddle::model::print::print_model;

const DEMOS: [&str; 4] = [
    include_str!("../../models/harbour.saddle"),
    include_str!("../../models/island_growth.saddle"),
    include_str!("../../models/island_growth_full_depreciation.saddle"),
    include_str!("../../models/ferry.saddle"),
];

/// Pieces of the language, so random sequences reach deep parser states.
const TOKENS: [&str; 48] = [
    "endogenous",
    "exogenous",
    "parameters",
    "equations",
    "covariance",
    "steady",
    "options",
    "title",
    "log",
    "guess",
    "t",
    "ss",
    "sd",
    "var",
    "corr",
    "exp",
    "ln",
    "min",
    "max",
    "x",
    "y",
    "e",
    "beta",
    "k",
    "0",
    "1",
    "0.5",
    ".5",
    "1e-3",
    "2.5E+4",
    "\"label\"",
    "\"",
    "(",
    ")",
    "[",
    "]",
    ",",
    ":",
    "=",
    "+",
    "-",
    "*",
    "/",
    "^",
    "\n",
    "#",
    "t+1",
    "\\",
];

/// Checks `src` and, when it checks, that printing and re-reading gives the same model. Every
/// diagnostic's span must lie inside the text on character boundaries.
fn exercise(src: &str) -> Result<(), TestCaseError> {
    match check_source(src) {
        Ok(m) => {
            let printed = print_model(&m);
            let again = check_source(&printed);
            prop_assert!(
                again.is_ok(),
                "reprinted model fails: {:?}\n{printed}",
                again.err()
            );
            prop_assert_eq!(again.ok(), Some(m));
        }
        Err(diags) => {
            prop_assert!(!diags.is_empty());
            for d in &diags {
                prop_assert!(d.span.start <= d.span.end && d.span.end <= src.len());
                prop_assert!(
                    src.is_char_boundary(d.span.start) && src.is_char_boundary(d.span.end)
                );
                let _ = line_col(src, d.span.start);
                let rendered = saddle::language::diagnostics::render(
                    std::slice::from_ref(d),
                    "p.saddle",
                    src,
                    saddle::language::diagnostics::Colour::Never,
                );
                prop_assert!(!rendered.is_empty());
            }
        }
    }
    Ok(())
}

#[derive(Debug, Clone)]
enum Edit {
    Delete(usize, usize),
    Insert(usize, String),
    DuplicateLine(usize),
    SwapLines(usize, usize),
}

fn edit() -> impl Strategy<Value = Edit> {
    prop_oneof![
        (any::<usize>(), 1usize..12).prop_map(|(p, n)| Edit::Delete(p, n)),
        (any::<usize>(), prop::sample::select(TOKENS.to_vec()))
            .prop_map(|(p, t)| Edit::Insert(p, t.to_string())),
        (any::<usize>(), "[ -~]{1,3}").prop_map(|(p, s)| Edit::Insert(p, s)),
        any::<usize>().prop_map(Edit::DuplicateLine),
        (any::<usize>(), any::<usize>()).prop_map(|(a, b)| Edit::SwapLines(a, b)),
    ]
}

fn apply(src: &str, edits: &[Edit]) -> String {
    let mut s = src.to_string();
    let boundary = |s: &str, p: usize| {
        let mut p = p % (s.len() + 1);
        while !s.is_char_boundary(p) {
            p -= 1;
        }
        p
    };
    for e in edits {
        match e {
            Edit::Delete(p, n) => {
                let a = boundary(&s, *p);
                let b = boundary(&s, (a + n).min(s.len()));
                if a < b {
                    s.replace_range(a..b, "");
                }
            }
            Edit::Insert(p, t) => {
                let a = boundary(&s, *p);
                s.insert_str(a, t);
            }
            Edit::DuplicateLine(i) => {
                let mut lines: Vec<String> = s.lines().map(String::from).collect();
                if !lines.is_empty() {
                    let i = i % lines.len();
                    let l = lines[i].clone();
                    lines.insert(i, l);
                }
                s = lines.join("\n");
            }
            Edit::SwapLines(a, b) => {
                let mut lines: Vec<String> = s.lines().map(String::from).collect();
                if !lines.is_empty() {
                    let n = lines.len();
                    lines.swap(a % n, b % n);
                }
                s = lines.join("\n");
            }
        }
    }
    s
}

fn config(cases: u32) -> ProptestConfig {
    ProptestConfig {
        cases,
        failure_persistence: None,
        ..ProptestConfig::default()
    }
}

proptest! {
    #![proptest_config(config(4000))]
    #[test]
    fn arbitrary_strings_never_panic(s in "\\PC{0,300}") {
        exercise(&s)?;
        let _ = parse(&s);
    }
}

proptest! {
    #![proptest_config(config(3000))]
    #[test]
    fn token_soup_never_panics(toks in prop::collection::vec(prop::sample::select(TOKENS.to_vec()), 0..80),
                               seps in prop::collection::vec(prop::sample::select(vec![" ", "", "\n", "  "]), 80)) {
        let mut s = String::new();
        for (i, t) in toks.iter().enumerate() {
            s.push_str(t);
            s.push_str(seps[i % seps.len()]);
        }
        exercise(&s)?;
    }
}

proptest! {
    #![proptest_config(config(4000))]
    #[test]
    fn mutated_demo_models_never_panic(which in 0usize..DEMOS.len(),
                                       edits in prop::collection::vec(edit(), 1..6)) {
        exercise(&apply(DEMOS[which], &edits))?;
    }
}

proptest! {
    #![proptest_config(config(100_000))]
    #[test]
    #[ignore = "long: 100,000 more mutated models"]
    fn mutated_demo_models_never_panic_long(which in 0usize..DEMOS.len(),
                                            edits in prop::collection::vec(edit(), 1..12)) {
        exercise(&apply(DEMOS[which], &edits))?;
    }
}

proptest! {
    #![proptest_config(config(100_000))]
    #[test]
    #[ignore = "long: 100,000 more arbitrary strings"]
    fn arbitrary_strings_never_panic_long(s in "\\PC{0,2000}") {
        exercise(&s)?;
    }
}

#[test]
fn mutations_do_change_the_models() {
    // The mutation strategy must actually produce broken models, or the property is vacuous.
    let broken = apply(
        DEMOS[0],
        &[Edit::Delete(1200, 6), Edit::Insert(900, "(".into())],
    );
    assert_ne!(broken, DEMOS[0]);
    assert!(check_source(&broken).is_err());
}

proptest! {
    #![proptest_config(config(1000))]
    #[test]
    fn any_finite_parameter_values_print_and_read_back_exactly(
        values in prop::collection::vec(
            prop_oneof![
                any::<f64>().prop_filter("finite", |v| v.is_finite()),
                (-1e6f64..1e6),
                (-3i32..4).prop_map(f64::from),
            ],
            8,
        )
    ) {
        // The harbour model's parameters (kappa included) replaced by arbitrary numbers: the
        // canonical text must carry every value exactly, signs and extreme magnitudes included.
        let m = check_source(DEMOS[0]).unwrap();
        let names: Vec<String> = m.parameters.iter().map(|p| p.name.clone()).collect();
        let overrides: Vec<(String, f64)> = names.into_iter().zip(values).collect();
        let o = m.with_overrides(&overrides).unwrap();
        let printed = print_model(&o);
        let again = check_source(&printed);
        prop_assert!(again.is_ok(), "{:?}\n{printed}", again.err());
        let again = again.unwrap();
        for (a, b) in o.parameters.iter().zip(&again.parameters) {
            prop_assert_eq!(a.value.to_bits() == b.value.to_bits() || a.value == b.value, true,
                "{} printed as {}", a.value, printed);
        }
        prop_assert_eq!(again, o);
    }
}
