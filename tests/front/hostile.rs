//! Hostile input: deep nesting, huge lines, long operator chains and binary data give a clear
//! error quickly, never a stack overflow, a hang or a panic.

use std::process::Command;
use std::time::{Duration, Instant};

use saddle::model::print::print_model;
use saddle::model::{check_source, MAX_EXPR_DEPTH};

/// Generous bound for one hostile input in the debug-profile test build (opt-level 2); the real
/// cost is a few milliseconds per megabyte.
const QUICK: Duration = Duration::from_secs(5);

fn codes(src: &str) -> Vec<&'static str> {
    let started = Instant::now();
    let r = check_source(src);
    assert!(started.elapsed() < QUICK, "took {:?}", started.elapsed());
    r.expect_err("hostile input must not check")
        .iter()
        .map(|d| d.code)
        .collect()
}

const HEAD: &str = "endogenous\n  x\nequations\n  x = ";

#[test]
fn two_hundred_thousand_nested_parentheses() {
    let n = 200_000;
    let src = format!("{HEAD}{}1{}\n", "(".repeat(n), ")".repeat(n));
    assert_eq!(codes(&src), ["brackets-too-deep"]);
    // Unclosed too.
    let src = format!("{HEAD}{}1\n", "(".repeat(n));
    assert_eq!(codes(&src), ["brackets-too-deep"]);
    // Square brackets the same way.
    // `x[[` is also a syntax error, reported beside the depth.
    let src = format!("{HEAD}x{}t\n", "[".repeat(n));
    let c = codes(&src);
    assert!(c.contains(&"brackets-too-deep") && c.len() <= 2, "{c:?}");
}

#[test]
fn a_five_megabyte_line() {
    let terms = 5_000_000 / 2;
    let src = format!("{HEAD}{}1\n", "1+".repeat(terms));
    assert_eq!(codes(&src), ["line-too-long"]);
    let src = format!("endogenous\n  {}\n", "a".repeat(5_000_000));
    assert_eq!(codes(&src), ["line-too-long"]);
    let src = format!("# {}\n", "#".repeat(5_000_000));
    assert_eq!(codes(&src), ["line-too-long"]);
}

#[test]
fn long_chains_within_the_line_limit_are_refused_by_depth() {
    // 40,000 terms of a sum (left-nested), a power tower (right-nested), unary minus signs,
    // all under the token limit of a statement.
    let sum = format!("{HEAD}{}x\n", "x + ".repeat(40_000));
    assert_eq!(codes(&sum), ["expression-too-deep"]);
    let tower = format!("{HEAD}{}2\n", "2^".repeat(40_000));
    assert_eq!(codes(&tower), ["expression-too-deep"]);
    let minus = format!("{HEAD}{}x\n", "-".repeat(60_000));
    assert_eq!(codes(&minus), ["expression-too-deep"]);
    // Past the token limit of one statement (continued over many lines).
    let many = format!("{HEAD}{}x\n", "x +\n".repeat(150_000));
    let c = codes(&many);
    assert!(c.contains(&"statement-too-long") && c.len() <= 2, "{c:?}");
}

#[test]
fn nesting_just_under_the_limit_checks_and_round_trips_on_a_test_thread() {
    // A sum of MAX_EXPR_DEPTH - 20 terms nests that deep: it must check, print and read back in
    // the default 2 MiB stack of a test thread.
    let n = MAX_EXPR_DEPTH - 20;
    let src = format!("{HEAD}{}x[t-1]\n", "0.5 * x[t-1] + ".repeat(n));
    let m = check_source(&src).unwrap();
    let again = check_source(&print_model(&m)).unwrap();
    assert_eq!(m, again);
    // Nested function calls below the bracket limit are fine too.
    let src = format!("{HEAD}{}x[t-1]{}\n", "abs(".repeat(200), ")".repeat(200));
    check_source(&src).unwrap();
}

#[test]
fn many_errors_are_capped() {
    let mut src = String::from("endogenous\n  x\nequations\n  x = x[t-1]\nparameters\n");
    for i in 0..5000 {
        src.push_str(&format!("  p{i} = unknown_{i}\n"));
    }
    let started = Instant::now();
    let d = check_source(&src).unwrap_err();
    assert!(started.elapsed() < QUICK);
    assert_eq!(d.len(), saddle::language::diagnostics::MAX_DIAGNOSTICS + 1);
    assert!(d.last().unwrap().message.contains("more errors not shown"));
}

#[test]
fn control_characters_and_nul_are_bad_characters_in_process() {
    let src = "endogenous\n  x\u{0}y\nequations\n  x = \u{7}1\n";
    let c = codes(src);
    assert!(c.iter().all(|c| *c == "bad-character"), "{c:?}");
}

#[test]
fn hostile_files_through_the_binary() {
    let dir = tempfile::tempdir().unwrap();
    let cases: Vec<(&str, Vec<u8>, &str)> = vec![
        (
            "parens.saddle",
            format!("{HEAD}{}1\n", "(".repeat(200_000)).into_bytes(),
            "brackets nested more than",
        ),
        (
            "line.saddle",
            format!("{HEAD}{}1\n", "1+".repeat(2_500_000)).into_bytes(),
            "line is 5000",
        ),
        // The graphical renderer cannot draw beyond display column 65,535: these used to panic
        // (an error far along a line, after 16,384 tabs, and a 65,536-character name printed in
        // a padded table by `solve`).
        (
            "far.saddle",
            format!("{HEAD}{}zz\n", " ".repeat(70_000)).into_bytes(),
            "unknown name `zz`",
        ),
        (
            "tabs.saddle",
            format!(
                "endogenous\n  x\nequations\n{}  x = zz\n",
                "\t".repeat(16_384)
            )
            .into_bytes(),
            "unknown name `zz`",
        ),
        (
            "name.saddle",
            format!(
                "endogenous\n  {n}\nexogenous\n  e\nequations\n  {n} = 0.5 * {n}[t-1] + e\n",
                n = "a".repeat(65_536)
            )
            .into_bytes(),
            "above the limit of 255",
        ),
        (
            "random.bin",
            (0..4096u32)
                .map(|i| (i.wrapping_mul(2_654_435_761) >> 13) as u8)
                .collect(),
            "not a text model file",
        ),
    ];
    for (name, bytes, expect) in cases {
        let p = dir.path().join(name);
        std::fs::write(&p, bytes).unwrap();
        let started = Instant::now();
        for command in ["check", "solve"] {
            let out = Command::new(env!("CARGO_BIN_EXE_saddle"))
                .arg(command)
                .arg(&p)
                .env("NO_COLOR", "1")
                .output()
                .unwrap();
            assert!(started.elapsed() < QUICK, "{name}: {:?}", started.elapsed());
            assert_eq!(out.status.code(), Some(1), "{name} {command}");
            let err = String::from_utf8_lossy(&out.stderr);
            assert!(err.contains(expect), "{name} {command}: {err}");
            assert!(!err.contains("panicked"), "{name} {command}: {err}");
        }
    }
}

#[test]
fn broken_statements_of_chained_operators_recover_in_one_pass() {
    // Twenty statements, each 20,000 unary minus signs or a 20,000-story power tower followed by
    // a syntax error and 16,000 more tokens. The generated parser's own recovery scanned its whole
    // stack for every dropped token (30 s in the release build for the tower); each statement
    // must be reported once and skipped.
    for chain in ["-", "x ^ "] {
        let mut src = String::from("endogenous\n  x\nequations\n");
        for i in 0..20 {
            src.push_str(&format!(
                "  bad{i}: x = {} , {}\n",
                chain.repeat(20_000),
                vec!["x"; 16_000].join(" + ")
            ));
        }
        let started = Instant::now();
        let d = check_source(&src).unwrap_err();
        assert!(
            started.elapsed() < QUICK,
            "{chain:?}: took {:?}",
            started.elapsed()
        );
        let syntax = d.iter().filter(|d| d.code == "syntax").count();
        assert_eq!(
            syntax,
            20,
            "{chain:?}: {:?}",
            d.iter().map(|d| d.code).collect::<Vec<_>>()
        );
    }
}

#[test]
fn quadratic_traps_stay_linear() {
    let n = 50_000;
    // Many valueless parameters; many unknown names among many declared ones; a long chain of
    // parameters that each also refer to themselves (a cycle at every depth of the search).
    let mut src = String::from("endogenous\n  x\nequations\n  x = x[t-1]\nparameters\n");
    for i in 0..n {
        src.push_str(&format!(
            "  v{i}\n  p{i} = p{i} + p{} + unknown{i}\n",
            i + 1
        ));
    }
    src.push_str(&format!("  p{n} = 1\n"));
    let started = Instant::now();
    let d = check_source(&src).unwrap_err();
    eprintln!("many valueless and unknown: {:?}", started.elapsed());
    assert!(started.elapsed() < QUICK, "took {:?}", started.elapsed());
    assert_eq!(d.len(), saddle::language::diagnostics::MAX_DIAGNOSTICS + 1);
    // A long cycle is shown by its first links.
    let mut src = String::from("endogenous\n  x\nequations\n  x = x[t-1]\nparameters\n");
    for i in 0..n {
        src.push_str(&format!("  p{i} = p{}\n", (i + 1) % n));
    }
    let started = Instant::now();
    let d = check_source(&src).unwrap_err();
    eprintln!("long cycle: {:?}", started.elapsed());
    assert!(started.elapsed() < QUICK, "took {:?}", started.elapsed());
    assert_eq!(d.len(), 1);
    assert!(
        d[0].message.contains("(50000 in the cycle)"),
        "{}",
        d[0].message
    );
    assert!(d[0].labels.len() < 20);
}

#[test]
fn too_many_innovations_are_refused_before_building_their_matrix() {
    let mut src = String::from("endogenous\n  x\nexogenous\n");
    for i in 0..200_000 {
        src.push_str(&format!("  e{i}\n"));
    }
    src.push_str("equations\n  x = e0\n");
    let started = Instant::now();
    let d = check_source(&src).unwrap_err();
    assert!(started.elapsed() < QUICK);
    assert_eq!(d.len(), 1);
    assert_eq!(d[0].code, "too-many-innovations");
}

#[test]
fn a_model_past_the_size_limit_is_refused_before_its_steady_state() {
    // 2,100 forward-looking variables coupled in a ring, with steady values to find by Newton
    // (a dense 2,100 x 2,100 Jacobian per iteration): the layout alone is past the limit of the
    // canonical form, so the refusal must come before any Newton step.
    let n = saddle::solution::MAX_PENCIL_DIM + 100;
    let mut src = String::from("endogenous\n");
    for i in 0..n {
        src.push_str(&format!("  x{i}\n"));
    }
    src.push_str("equations\n");
    for i in 0..n {
        src.push_str(&format!(
            "  x{i} = 0.5 * x{i}[t+1] + 0.1 * x{} + exp(x{i}) - 2\n",
            (i + 1) % n
        ));
    }
    let model = check_source(&src).expect("the model checks");
    let started = Instant::now();
    let err = saddle::solution::solve(&model, &saddle::solution::SolveOptions::default())
        .expect_err("past the size limit");
    assert!(started.elapsed() < QUICK, "took {:?}", started.elapsed());
    assert!(
        matches!(err, saddle::solution::SolveError::TooLarge { size, .. } if size == n),
        "{err}"
    );
}
