//! A mutation test: the bundled models and the annotated diagnostics files, mutated by bytes,
//! by tokens and by line shapes (long lines, far columns, many tabs), go through the whole
//! pipeline a user reaches (check, then solve, irf and moments when the model checks) without a
//! panic and within a time bound. Sized for CI (a few thousand inputs, seeded, so a failure
//! reproduces); `MUTATIONS=200000 cargo test --test front mutations -- --ignored` runs the long
//! version by hand.

use std::panic::{catch_unwind, AssertUnwindSafe};
use std::time::{Duration, Instant};

use saddle::analysis::irf::{impulse_responses, ImpulseSize};
use saddle::analysis::moments::moments;
use saddle::language::diagnostics::{render, Colour};
use saddle::model::check_source;
use saddle::solution::{solve, SolveOptions};

/// Bound for one input in the test profile (opt-level 2): checks take microseconds, a solve of
/// a bundled model milliseconds; a hang would show as seconds.
const PER_INPUT: Duration = Duration::from_secs(5);

/// A small deterministic generator (xorshift64*), so every run mutates the same way.
struct Rng(u64);
impl Rng {
    fn next(&mut self) -> u64 {
        self.0 ^= self.0 >> 12;
        self.0 ^= self.0 << 25;
        self.0 ^= self.0 >> 27;
        self.0.wrapping_mul(0x2545_f491_4f6c_dd1d)
    }
    fn below(&mut self, n: usize) -> usize {
        (self.next() % n.max(1) as u64) as usize
    }
}

fn corpus() -> Vec<String> {
    let root = env!("CARGO_MANIFEST_DIR");
    let mut files = Vec::new();
    for dir in ["models", "tests/diagnostics"] {
        let Ok(entries) = std::fs::read_dir(format!("{root}/{dir}")) else {
            continue;
        };
        for e in entries.flatten() {
            if e.path().extension().is_some_and(|x| x == "saddle") {
                if let Ok(s) = std::fs::read_to_string(e.path()) {
                    files.push(s);
                }
            }
        }
    }
    files.sort();
    files
}

/// Pieces a mutation may insert: tokens of the language, brackets, far columns, odd characters.
const PIECES: &[&str] = &[
    "[t+1]",
    "[t-1]",
    "[ss]",
    "(",
    ")",
    "[",
    "]",
    "*",
    "^",
    "/",
    "+",
    "-",
    "=",
    ",",
    ":",
    "~",
    "\n",
    "\n  ",
    "equations\n",
    "steady\n",
    "covariance\n",
    "objective\n",
    "priors\n",
    "observables\n",
    "endogenous\n",
    "exp(",
    "ln(",
    "1e308",
    "0",
    "-0",
    "1e-320",
    "NaN",
    "\"",
    "predetermined ",
    "log ",
    "sd(",
    "corr(",
    "guess ",
    "x",
    "t",
    "#",
    "\t",
];

fn mutate(src: &str, rng: &mut Rng) -> String {
    let mut b: Vec<u8> = src.as_bytes().to_vec();
    for _ in 0..1 + rng.below(4) {
        let at = rng.below(b.len() + 1);
        match rng.below(7) {
            0 if !b.is_empty() => {
                let end = (at + 1 + rng.below(8)).min(b.len());
                if at < end {
                    b.drain(at..end);
                }
            }
            1 => b
                .splice(at..at, PIECES[rng.below(PIECES.len())].bytes())
                .for_each(drop),
            2 if at < b.len() => b[at] = (rng.next() & 0x7f) as u8,
            3 => {
                // A far column: tens of thousands of spaces or tabs before a token.
                let fill = if rng.below(2) == 0 { b' ' } else { b'\t' };
                let n = 20_000 + rng.below(50_000);
                b.splice(at..at, std::iter::repeat_n(fill, n))
                    .for_each(drop);
            }
            4 => {
                // A long name.
                let n = 200 + rng.below(70_000);
                b.splice(at..at, std::iter::repeat_n(b'a', n))
                    .for_each(drop);
            }
            5 if !b.is_empty() => {
                // Duplicate a slice (a repeated line or section).
                let end = (at + rng.below(200)).min(b.len());
                let piece = b[at.min(end)..end].to_vec();
                b.splice(end..end, piece).for_each(drop);
            }
            _ => {}
        }
    }
    String::from_utf8_lossy(&b).into_owned()
}

/// Everything a user's command would do with `src`; panics propagate to the caller.
fn run_all(src: &str) {
    match check_source(src) {
        Err(diags) => {
            // The renderer the binary uses (it once panicked on far columns).
            let _ = render(&diags[..diags.len().min(3)], "m.saddle", src, Colour::Never);
        }
        Ok(model) => {
            if model.endogenous.len() > 200 {
                return;
            }
            if let Ok(solved) = solve(&model, &SolveOptions::default()) {
                let _ = impulse_responses(&solved, &[], ImpulseSize::OneSd, 8);
                let _ = moments(&solved, 3, &[]);
            }
        }
    }
}

fn run(n: usize, seed: u64) {
    let corpus = corpus();
    assert!(
        corpus.len() >= 10,
        "the corpus is the bundled models and diagnostics files"
    );
    let mut rng = Rng(seed);
    for i in 0..n {
        let base = &corpus[rng.below(corpus.len())];
        let src = mutate(base, &mut rng);
        let started = Instant::now();
        let outcome = catch_unwind(AssertUnwindSafe(|| run_all(&src)));
        let took = started.elapsed();
        if outcome.is_err() || took > PER_INPUT {
            let path = std::env::temp_dir().join(format!("saddle-mutation-{seed}-{i}.saddle"));
            let _ = std::fs::write(&path, &src);
            panic!(
                "input {i} (seed {seed}) {} after {took:?}; written to {}",
                if outcome.is_err() {
                    "panicked"
                } else {
                    "was slow"
                },
                path.display()
            );
        }
    }
}

#[test]
fn mutated_models_never_panic_or_hang() {
    run(1500, 0x5add1e);
}

#[test]
#[ignore = "long: run by hand with MUTATIONS=N"]
fn many_mutated_models_never_panic_or_hang() {
    let n = std::env::var("MUTATIONS")
        .ok()
        .and_then(|s| s.parse().ok())
        .unwrap_or(100_000);
    run(n, 0x5eed_2026);
}
