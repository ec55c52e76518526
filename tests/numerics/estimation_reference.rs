//! Estimation against closed forms and an independent optimiser:
//! - a normal mean with a normal prior and known variance, the conjugate case (Gelman et al.
//!   2013, Bayesian Data Analysis, sec. 2.5): posterior mean = mode mu_n and sd tau_n exact, the
//!   marginal likelihood exact (y ~ N(mu_0 1, sigma^2 I + tau_0^2 1 1'));
//! - maximum likelihood of an AR(1) by the exact stationary likelihood against scipy.optimize
//!   (tests/reference/ar1_mle_scipy.py, its output pasted below; data tests/data/estimation_ar1.csv).

use nalgebra::DMatrix;
use saddle::analysis::simulate::NormalStream;
use saddle::estimation::{self, DiagnosticParams, McmcParams, ModeParams, Posterior};
use saddle::model::{check_source, Model};
use saddle::policy::Regime;
use saddle::solution::SolveOptions;

fn model(src: &str) -> Model {
    match check_source(src) {
        Ok(m) => m,
        Err(d) => panic!("test model does not check: {d:?}"),
    }
}

const NORMAL_MEAN: &str = "\
endogenous
  x
exogenous
  e
parameters
  mu = 0
equations
  x = e
observables
  y = mu + x
covariance
  sd(e) = 2
priors
  mu ~ normal(mean = 1, sd = 0.5)
";

/// 40 draws of N(3, 2^2) from saddle's seeded normal stream (seed 11).
fn normal_sample() -> Vec<f64> {
    let mut s = NormalStream::new(11);
    (0..40).map(|_| 3.0 + 2.0 * s.next_normal()).collect()
}

#[test]
fn conjugate_normal_mean_mode_sd_and_marginal_likelihood_are_exact() {
    let y = normal_sample();
    let n = y.len() as f64;
    let (mu0, tau0, sigma) = (1.0f64, 0.5f64, 2.0f64);
    // BDA sec. 2.5, eq. 2.12: 1/tau_n^2 = 1/tau0^2 + n/sigma^2, mu_n = tau_n^2 (mu0/tau0^2 + sum y / sigma^2).
    let prec = 1.0 / (tau0 * tau0) + n / (sigma * sigma);
    let tau_n = prec.sqrt().recip();
    let mu_n = (mu0 / (tau0 * tau0) + y.iter().sum::<f64>() / (sigma * sigma)) / prec;
    // Marginal: y ~ N(mu0 1, sigma^2 I + tau0^2 1 1'); det = sigma^(2(n-1)) (sigma^2 + n tau0^2),
    // inverse = (I - tau0^2 / (sigma^2 + n tau0^2) 1 1') / sigma^2 (Sherman-Morrison).
    let r: Vec<f64> = y.iter().map(|v| v - mu0).collect();
    let sr: f64 = r.iter().sum();
    let rr: f64 = r.iter().map(|v| v * v).sum();
    let c = sigma * sigma + n * tau0 * tau0;
    let quad = (rr - tau0 * tau0 / c * sr * sr) / (sigma * sigma);
    let logdet = 2.0 * (n - 1.0) * sigma.ln() + c.ln();
    let log_marginal = -0.5 * n * (2.0 * std::f64::consts::PI).ln() - 0.5 * logdet - 0.5 * quad;

    let m = model(NORMAL_MEAN);
    let data = DMatrix::from_column_slice(y.len(), 1, &y);
    let post = Posterior::new(&m, &data, SolveOptions::default(), Regime::Rule).unwrap();
    let mcmc = McmcParams {
        chains: 4,
        draws: 2000,
        burn_in: 500,
        seed: 5,
        ..McmcParams::default()
    };
    let est = estimation::estimate(
        &post,
        &ModeParams::default(),
        Some(&mcmc),
        &DiagnosticParams::default(),
        None,
        None,
    )
    .unwrap();
    // The simplex stops when log k varies by < 1e-9 over it: |mode - mu_n| ~ tau_n sqrt(2e-9).
    assert!(
        (est.mode.x[0] - mu_n).abs() < 1e-3 * tau_n,
        "{} vs {mu_n}",
        est.mode.x[0]
    );
    // A quadratic's central second difference is exact up to rounding (~1e-8 relative here).
    assert!(
        (est.mode.sd[0] / tau_n - 1.0).abs() < 1e-5,
        "{} vs {tau_n}",
        est.mode.sd[0]
    );
    // The posterior is exactly normal, so Laplace is exact (up to the mode's error, ~1e-9).
    let lap = est.mode.laplace.unwrap();
    assert!((lap - log_marginal).abs() < 1e-6, "{lap} vs {log_marginal}");
    // Monte Carlo: mean within 4 Monte Carlo standard errors (sd / sqrt(ESS)), sd within 10%.
    let s = &est.summaries[0];
    let mcse = tau_n / s.ess.sqrt();
    assert!(
        (s.mean - mu_n).abs() < 4.0 * mcse,
        "{} vs {mu_n} (mcse {mcse})",
        s.mean
    );
    assert!((s.sd / tau_n - 1.0).abs() < 0.1, "{} vs {tau_n}", s.sd);
    assert!(s.rhat < 1.01, "rhat {}", s.rhat);
    // The harmonic mean is an estimate: within 0.05 in logs of the exact value for 8000 draws.
    let hm = est.harmonic.unwrap();
    assert!((hm - log_marginal).abs() < 0.05, "{hm} vs {log_marginal}");
    for c in &est.chains {
        assert!(c.acceptance > 0.2 && c.acceptance < 0.9, "{}", c.acceptance);
    }
}

#[test]
fn draws_do_not_depend_on_the_thread_count() {
    let y = normal_sample();
    let m = model(NORMAL_MEAN);
    let data = DMatrix::from_column_slice(y.len(), 1, &y);
    let post = Posterior::new(&m, &data, SolveOptions::default(), Regime::Rule).unwrap();
    let mode = estimation::find_mode(&post, &ModeParams::default()).unwrap();
    let sz = estimation::proposal_covariance(&post, &mode);
    let z = post.to_z(&mode.x);
    let p = McmcParams {
        chains: 3,
        draws: 200,
        burn_in: 100,
        seed: 9,
        ..McmcParams::default()
    };
    let run = |threads: usize| {
        let pool = rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap();
        pool.install(|| estimation::run_chains(&post, &z, &sz, &p, None, None).unwrap())
    };
    let one = run(1);
    let two = run(2);
    assert_eq!(one, two);
    // Different chains differ (separate streams).
    assert_ne!(one[0].x, one[1].x);
}

const AR1: &str = "\
endogenous
  x
exogenous
  e
parameters
  rho = 0.3
equations
  x = rho * x[t-1] + e
observables
  y = x
covariance
  sd(e) = 1
priors
  rho ~ flat()
  sd(e) ~ flat()
";

// Output of tests/reference/ar1_mle_scipy.py (scipy 1.17.1).
const AR1_RHO: f64 = 0.8001191563694647;
const AR1_SIGMA: f64 = 0.5091393769370611;
const AR1_LOGLIK: f64 = -89.77969817957279;
const AR1_SE_RHO: f64 = 0.054392843297470385;
const AR1_SE_SIGMA: f64 = 0.03286881173894471;

#[test]
fn ar1_maximum_likelihood_matches_scipy() {
    let bytes = std::fs::read(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/data/estimation_ar1.csv"
    ))
    .unwrap();
    let data = saddle::data::read_data(&bytes, &["y".to_string()], 1).unwrap();
    let m = model(AR1);
    let post = Posterior::new(&m, &data.values, SolveOptions::default(), Regime::Rule).unwrap();
    assert!(post.all_flat());
    let est = estimation::estimate(
        &post,
        &ModeParams::default(),
        None,
        &DiagnosticParams::default(),
        None,
        None,
    )
    .unwrap();
    assert!(est.maximum_likelihood);
    // Both optimisers stop near 1e-9 in log L: estimates agree to ~1e-4 of their standard errors.
    assert!(
        (est.mode.x[0] - AR1_RHO).abs() < 1e-3 * AR1_SE_RHO,
        "{:?}",
        est.mode.x
    );
    assert!(
        (est.mode.x[1] - AR1_SIGMA).abs() < 1e-3 * AR1_SE_SIGMA,
        "{:?}",
        est.mode.x
    );
    assert!(
        (est.mode.loglik - AR1_LOGLIK).abs() < 1e-7,
        "{}",
        est.mode.loglik
    );
    // Standard errors from the finite-difference Hessian against scipy's analytic one.
    assert!(
        (est.mode.sd[0] / AR1_SE_RHO - 1.0).abs() < 1e-4,
        "{:?}",
        est.mode.sd
    );
    assert!(
        (est.mode.sd[1] / AR1_SE_SIGMA - 1.0).abs() < 1e-4,
        "{:?}",
        est.mode.sd
    );
    // No marginal likelihood with flat priors.
    assert!(est.mode.laplace.is_none());
}

#[test]
fn a_point_without_a_stable_solution_has_zero_density() {
    let bytes = std::fs::read(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/data/estimation_ar1.csv"
    ))
    .unwrap();
    let data = saddle::data::read_data(&bytes, &["y".to_string()], 1).unwrap();
    let m = model(AR1);
    let post = Posterior::new(&m, &data.values, SolveOptions::default(), Regime::Rule).unwrap();
    // rho = 1.5: explosive, no unique stable solution (x is predetermined).
    assert_eq!(post.log_posterior(&[1.5, 0.5]), f64::NEG_INFINITY);
    assert!(post.log_posterior(&[0.5, 0.5]).is_finite());
    // A negative sd is outside its support.
    assert_eq!(post.log_posterior(&[0.5, -0.5]), f64::NEG_INFINITY);
}
