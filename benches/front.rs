//! Benchmark of the front end: lex, parse and check a generated model of 10,000 equations with
//! mixed leads and lags, lagged innovations and nonlinear terms. Bar (issue 2): under 200 ms in
//! total for parse and check in a release build.
//!
//! Run: `cargo bench --bench front` (prints the median of several runs per phase).

use std::time::{Duration, Instant};

use saddle::language::lexer::Lexer;
use saddle::language::parse;
use saddle::model::check::check_file;
use saddle::model::check_source;

/// Builds a model of `n` equations: each variable depends on its own lag, a neighbour's lead
/// (one or two periods), a nonlinear term in another neighbour, and an innovation (some lagged).
fn generate(n: usize) -> String {
    let shocks = 100;
    let mut s = String::with_capacity(n * 120);
    s.push_str("title \"generated benchmark model\"\n\nendogenous\n");
    for i in 0..n {
        if i % 3 == 0 {
            s.push_str(&format!("  log x{i} \"variable {i}\"\n"));
        } else {
            s.push_str(&format!("  x{i}\n"));
        }
    }
    s.push_str("\nexogenous\n");
    for j in 0..shocks {
        s.push_str(&format!("  e{j}\n"));
    }
    s.push_str("\nparameters\n");
    for j in 0..100 {
        s.push_str(&format!("  a{j} = 0.{:02} * scale\n", j % 90 + 5));
    }
    s.push_str("  scale = 0.9\n  b = (1 - scale) / 2\n");
    s.push_str("\nequations\n");
    for i in 0..n {
        let next = (i + 1) % n;
        let other = (i + 7) % n;
        let lead = if i % 5 == 0 { 2 } else { 1 };
        let shock = i % shocks;
        let shock_term = if i % 4 == 0 {
            format!("e{shock}[t-1]")
        } else {
            format!("e{shock}")
        };
        s.push_str(&format!(
            "  q{i}: x{i} = a{p} * x{i}[t-1] + b * x{next}[t+{lead}] - 0.01 * exp(x{other}) ^ 0.5 + min(x{other}[t-1], 1) / (1 + x{next}^2) + {shock_term}\n",
            p = i % 100
        ));
    }
    s.push_str("\ncovariance\n");
    for j in 0..shocks {
        s.push_str(&format!("  sd(e{j}) = 0.01 * (1 + a{j})\n"));
    }
    s
}

fn median(mut v: Vec<Duration>) -> Duration {
    v.sort();
    v[v.len() / 2]
}

fn ms(d: Duration) -> f64 {
    d.as_secs_f64() * 1e3
}

fn main() {
    // `cargo bench` passes `--bench`; `cargo test --all-targets` runs this program without it,
    // and then a small smoke run is enough.
    let full = std::env::args().any(|a| a == "--bench");
    let (n, runs) = if full { (10_000, 9) } else { (500, 1) };
    let src = generate(n);
    let (mut lex, mut parse_t, mut check, mut total) = (vec![], vec![], vec![], vec![]);
    let mut tokens = 0;
    for _ in 0..runs {
        let t = Instant::now();
        tokens = Lexer::new(&src).count();
        lex.push(t.elapsed());

        let t = Instant::now();
        let (file, diags) = parse(&src);
        parse_t.push(t.elapsed());
        assert!(
            diags.is_empty(),
            "generated model has syntax errors: {diags:?}"
        );

        let t = Instant::now();
        let model = check_file(&file);
        check.push(t.elapsed());
        let model = model.unwrap_or_else(|d| {
            panic!("generated model does not check: {:?}", &d[..d.len().min(3)])
        });
        assert_eq!(model.equations.len(), n);
        drop(file);

        let t = Instant::now();
        let m = check_source(&src);
        total.push(t.elapsed());
        assert!(m.is_ok());
    }
    let (lex, parse_t, check, total) = (median(lex), median(parse_t), median(check), median(total));
    println!(
        "front-end benchmark: {n} equations, {} bytes, {tokens} tokens, median of {runs} runs",
        src.len()
    );
    println!("  lex only                   {:8.2} ms", ms(lex));
    println!("  parse (lex + grammar)      {:8.2} ms", ms(parse_t));
    println!("  check (resolve, evaluate)  {:8.2} ms", ms(check));
    println!("  check_source (all phases)  {:8.2} ms", ms(total));
    println!(
        "  bar: < 200 ms total -> {}",
        if total < Duration::from_millis(200) {
            "met"
        } else {
            "NOT met"
        }
    );
}
