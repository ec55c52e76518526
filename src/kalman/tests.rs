//! Checks of the filter, smoother and forecasts against the exact Gaussian conditional
//! distribution of the whole stacked sample (Hamilton 1994, Time Series Analysis, ch. 13: every
//! state and observation is a linear function of alpha_0, the innovations and the measurement
//! errors; condition the joint normal on the observed entries), and of the fast likelihood
//! against the univariate filter.

use nalgebra::{DMatrix, DVector};

use super::*;

/// Deterministic pseudo-random numbers in (-1, 1) (a 64-bit LCG; only for building test input).
struct Lcg(u64);
impl Lcg {
    fn next(&mut self) -> f64 {
        self.0 = self
            .0
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        ((self.0 >> 11) as f64 / (1u64 << 53) as f64) * 2.0 - 1.0
    }
    fn matrix(&mut self, r: usize, c: usize) -> DMatrix<f64> {
        DMatrix::from_fn(r, c, |_, _| self.next())
    }
}

/// A stable random system: n states, k shocks, p observables, Hm = L L' (correlated) when
/// `correlated`, else diagonal.
fn system(
    seed: u64,
    n: usize,
    k: usize,
    p: usize,
    radius: f64,
    correlated: bool,
) -> StateSpaceModel {
    let mut g = Lcg(seed);
    let mut t = g.matrix(n, n);
    let rho = t
        .clone()
        .complex_eigenvalues()
        .iter()
        .map(|z| z.norm())
        .fold(0.0, f64::max);
    t *= radius / rho;
    let r = g.matrix(n, k);
    let lq = g.matrix(k, k);
    let q = &lq * lq.transpose() + DMatrix::identity(k, k) * 0.1;
    let z = g.matrix(p, n);
    let d = DVector::from_fn(p, |_, _| g.next() * 3.0);
    let hm = if correlated {
        let l = g.matrix(p, p) * 0.5;
        &l * l.transpose() + DMatrix::identity(p, p) * 0.05
    } else {
        DMatrix::from_fn(p, p, |i, j| if i == j { 0.1 + 0.1 * i as f64 } else { 0.0 })
    };
    StateSpaceModel { t, r, q, d, z, hm }
}

/// The exact conditional moments of the stacked sample of length `m` (periods 1..=m) given the
/// finite entries of `y` (m x p), with alpha_0 ~ N(0, p0).
struct Stacked {
    loglik: f64,
    /// E and Var of alpha_t | data, t = 0..=m.
    mean: Vec<DVector<f64>>,
    var: Vec<DMatrix<f64>>,
    /// E and Var of e_t | data, t = 1..=m.
    e_mean: Vec<DVector<f64>>,
    e_var: Vec<DMatrix<f64>>,
    /// E and Var of y_t | data, t = 1..=m (measurement error included).
    y_mean: Vec<DVector<f64>>,
    y_var: Vec<DMatrix<f64>>,
}

fn stacked(model: &StateSpaceModel, y: &DMatrix<f64>, p0: &DMatrix<f64>) -> Stacked {
    let (n, k, p) = (model.n_states(), model.n_shocks(), model.n_observables());
    let m = y.nrows();
    let dim = n + m * (k + p);
    let mut cov = DMatrix::zeros(dim, dim);
    cov.view_mut((0, 0), (n, n)).copy_from(p0);
    for t in 0..m {
        let o = n + t * k;
        cov.view_mut((o, o), (k, k)).copy_from(&model.q);
        let o = n + m * k + t * p;
        cov.view_mut((o, o), (p, p)).copy_from(&model.hm);
    }
    // Loadings of alpha_t (t = 0..=m) and y_t - d (t = 1..=m) on the primitives.
    let mut a_load = vec![DMatrix::zeros(n, dim)];
    a_load[0].view_mut((0, 0), (n, n)).fill_with_identity();
    let mut y_load = Vec::new();
    for t in 1..=m {
        let mut a = &model.t * &a_load[t - 1];
        a.view_mut((0, n + (t - 1) * k), (n, k)).copy_from(&model.r);
        let mut yl = &model.z * &a;
        let o = n + m * k + (t - 1) * p;
        for j in 0..p {
            yl[(j, o + j)] += 1.0;
        }
        a_load.push(a);
        y_load.push(yl);
    }
    let mut obs_rows = Vec::new();
    let mut obs_vals = Vec::new();
    for t in 0..m {
        for j in 0..p {
            if y[(t, j)].is_finite() {
                obs_rows.push(y_load[t].row(j).into_owned());
                obs_vals.push(y[(t, j)] - model.d[j]);
            }
        }
    }
    let o = DMatrix::from_rows(&obs_rows);
    let yo = DVector::from_vec(obs_vals);
    let coo = &o * &cov * o.transpose();
    let chol = coo.clone().cholesky().expect("positive definite");
    let alpha = chol.solve(&yo);
    let logdet: f64 = 2.0 * chol.l().diagonal().iter().map(|v| v.ln()).sum::<f64>();
    let loglik =
        -0.5 * (yo.len() as f64 * (2.0 * std::f64::consts::PI).ln() + logdet + yo.dot(&alpha));
    let cond = |b: &DMatrix<f64>| {
        let cbo = b * &cov * o.transpose();
        let mean = &cbo * &alpha;
        let var = b * &cov * b.transpose() - &cbo * chol.solve(&cbo.transpose());
        (mean, var)
    };
    let mut out = Stacked {
        loglik,
        mean: Vec::new(),
        var: Vec::new(),
        e_mean: Vec::new(),
        e_var: Vec::new(),
        y_mean: Vec::new(),
        y_var: Vec::new(),
    };
    for a in &a_load {
        let (mu, v) = cond(a);
        out.mean.push(mu);
        out.var.push(v);
    }
    for t in 0..m {
        let mut sel = DMatrix::zeros(k, dim);
        sel.view_mut((0, n + t * k), (k, k)).fill_with_identity();
        let (mu, v) = cond(&sel);
        out.e_mean.push(mu);
        out.e_var.push(v);
        let (mu, v) = cond(&y_load[t]);
        out.y_mean.push(mu + &model.d);
        out.y_var.push(v);
    }
    out
}

/// max |a - b| / (1 + max |b|): a relative measure that stays meaningful for entries near zero.
fn rel(a: &DMatrix<f64>, b: &DMatrix<f64>) -> f64 {
    let scale = 1.0 + b.iter().fold(0.0f64, |s, v| s.max(v.abs()));
    (a - b).iter().fold(0.0f64, |s, v| s.max(v.abs())) / scale
}
fn relv(a: &DVector<f64>, b: &DVector<f64>) -> f64 {
    rel(
        &DMatrix::from_column_slice(a.len(), 1, a.as_slice()),
        &DMatrix::from_column_slice(b.len(), 1, b.as_slice()),
    )
}

fn data(seed: u64, m: usize, p: usize) -> DMatrix<f64> {
    let mut g = Lcg(seed);
    DMatrix::from_fn(m, p, |_, _| 2.0 * g.next())
}

// Tolerance 1e-9 relative: both sides are backward-stable O(n^3) computations on
// well-conditioned problems of size < 100; the stacked one conditions a covariance of
// dimension ~20 with condition number ~1e3, leaving ~1e-12; 1e-9 keeps a wide margin.
const TOL: f64 = 1e-9;

#[test]
fn filter_and_smoother_match_the_stacked_sample() {
    for (seed, correlated) in [(1u64, false), (2, true), (3, true)] {
        let model = system(seed, 3, 2, 2, 0.9, correlated);
        let mut y = data(seed + 10, 8, 2);
        y[(2, 1)] = f64::NAN;
        y[(5, 0)] = f64::NAN;
        y[(5, 1)] = f64::NAN;
        let params = KalmanParams::default();
        let init = initial_state(&model, &params).unwrap();
        assert!(init.p_inf.is_none());
        let st = stacked(&model, &y, &init.p_star);
        let f = filter(&model, &y, &params).unwrap();
        assert!(
            (f.loglik - st.loglik).abs() <= TOL * st.loglik.abs(),
            "{} vs {}",
            f.loglik,
            st.loglik
        );
        assert!((loglik(&model, &y, &params).unwrap() - st.loglik).abs() <= TOL * st.loglik.abs());
        let s = smooth(&model, &f).unwrap();
        for t in 0..=8 {
            assert!(relv(&s.states[t], &st.mean[t]) < TOL, "state {t}");
            assert!(rel(&s.state_var[t], &st.var[t]) < TOL, "state var {t}");
        }
        for t in 0..8 {
            assert!(relv(&s.shocks[t], &st.e_mean[t]) < TOL, "shock {t}");
            assert!(rel(&s.shock_var[t], &st.e_var[t]) < TOL, "shock var {t}");
        }
        // Filtered means: condition on the data up to t only.
        for t in 1..=8 {
            let yt = y.rows(0, t).into_owned();
            let st_t = stacked(&model, &yt, &init.p_star);
            assert!(relv(&f.a_filt[t], &st_t.mean[t]) < TOL, "filtered {t}");
        }
        // Decomposition adds up to the smoothed path.
        let dec = decompose(&model, &s);
        for t in 1..=8 {
            let sum = &dec.initial[t - 1] + dec.shocks[t - 1].column_sum();
            assert!(relv(&sum, &s.states[t]) < 1e-10, "decomposition {t}");
        }
    }
}

#[test]
fn forecasts_match_the_stacked_sample() {
    let model = system(4, 3, 2, 2, 0.85, true);
    let y = data(40, 10, 2);
    let params = KalmanParams::default();
    let init = initial_state(&model, &params).unwrap();
    let h = 4;
    let mut ext = DMatrix::from_element(10 + h, 2, f64::NAN);
    ext.view_mut((0, 0), (10, 2)).copy_from(&y);
    let st = stacked(&model, &ext, &init.p_star);
    let f = filter(&model, &y, &params).unwrap();
    let fc = forecast(&model, &f, h).unwrap();
    for i in 0..h {
        assert!(relv(&fc.state_mean[i], &st.mean[11 + i]) < TOL);
        assert!(rel(&fc.state_var[i], &st.var[11 + i]) < TOL);
        assert!(relv(&fc.obs_mean[i], &st.y_mean[10 + i]) < TOL);
        assert!(rel(&fc.obs_var[i], &st.y_var[10 + i]) < TOL);
    }
    // No conditions: the conditional forecast is the unconditional one.
    let free = DMatrix::from_element(h, 2, f64::NAN);
    let c0 = forecast_given_path(&model, &y, &free, &params).unwrap();
    for i in 0..h {
        assert!(relv(&c0.obs_mean[i], &fc.obs_mean[i]) < TOL);
        assert!(rel(&c0.obs_var[i], &fc.obs_var[i]) < TOL);
    }
    // Conditions on observable 0 for two periods: exact Gaussian conditioning.
    let mut fixed = free.clone();
    fixed[(0, 0)] = 1.5;
    fixed[(1, 0)] = -0.5;
    ext.view_mut((10, 0), (h, 2)).copy_from(&fixed);
    let st = stacked(&model, &ext, &init.p_star);
    let c = forecast_given_path(&model, &y, &fixed, &params).unwrap();
    for i in 0..h {
        assert!(
            relv(&c.state_mean[i], &st.mean[11 + i]) < TOL,
            "cond state {i}"
        );
        assert!(
            rel(&c.state_var[i], &st.var[11 + i]) < TOL,
            "cond state var {i}"
        );
        assert!(
            relv(&c.obs_mean[i], &st.y_mean[10 + i]) < TOL,
            "cond obs {i}"
        );
        assert!(
            rel(&c.obs_var[i], &st.y_var[10 + i]) < TOL,
            "cond obs var {i}"
        );
    }
    // The conditions are met exactly, with zero variance.
    assert!((c.obs_mean[0][0] - 1.5).abs() < 1e-12 * 1.5);
    assert!((c.obs_mean[1][0] + 0.5).abs() < 1e-12);
    assert!(c.obs_var[0][(0, 0)].abs() < 1e-12 * fc.obs_var[0][(0, 0)]);
}

/// An observable that is an exact combination of two others (no measurement error): the
/// univariate filter skips it, so the likelihood and smoothed states equal those of the model
/// without it; a value that breaks the identity is a contradiction.
#[test]
fn singular_forecast_error_covariance() {
    let base = system(5, 3, 3, 2, 0.8, false);
    let mut model = base.clone();
    model.hm = DMatrix::zeros(3, 3);
    let mut z = DMatrix::zeros(3, 3);
    z.view_mut((0, 0), (2, 3)).copy_from(&base.z);
    for j in 0..3 {
        z[(2, j)] = base.z[(0, j)] + 2.0 * base.z[(1, j)];
    }
    model.z = z;
    model.d = DVector::from_vec(vec![base.d[0], base.d[1], base.d[0] + 2.0 * base.d[1]]);
    let mut two = base.clone();
    two.hm = DMatrix::zeros(2, 2);
    let y2 = data(50, 12, 2);
    let y3 = DMatrix::from_fn(12, 3, |t, j| {
        if j < 2 {
            y2[(t, j)]
        } else {
            y2[(t, 0)] + 2.0 * y2[(t, 1)]
        }
    });
    let params = KalmanParams::default();
    let f3 = filter(&model, &y3, &params).unwrap();
    let f2 = filter(&two, &y2, &params).unwrap();
    assert_eq!(f3.n_skipped, 12);
    assert!((f3.loglik - f2.loglik).abs() < 1e-10 * f2.loglik.abs());
    assert!((loglik(&model, &y3, &params).unwrap() - f2.loglik).abs() < 1e-10 * f2.loglik.abs());
    let s3 = smooth(&model, &f3).unwrap();
    let s2 = smooth(&two, &f2).unwrap();
    for t in 0..=12 {
        assert!(relv(&s3.states[t], &s2.states[t]) < 1e-9);
        assert!(rel(&s3.state_var[t], &s2.state_var[t]) < 1e-9);
    }
    let mut bad = y3.clone();
    bad[(6, 2)] += 0.01;
    match filter(&model, &bad, &params) {
        Err(KalmanError::Contradiction {
            period, observable, ..
        }) => {
            assert_eq!((period, observable), (7, 2));
        }
        other => panic!("expected a contradiction, got {other:?}"),
    }
}

/// A unit-root state: the exact diffuse filter and smoother against the stacked sample with
/// alpha_0 ~ N(0, P_* + kappa P_inf) for a large kappa. Durbin and Koopman (2012, sec. 5.2 and
/// 7.2.2): as kappa -> infinity the smoothed moments converge and log L + (q/2) log kappa tends to
/// the diffuse log-likelihood (which keeps the -0.5 log F_inf terms and their log 2 pi), with
/// errors O(1/kappa).
#[test]
fn diffuse_start_is_the_large_kappa_limit() {
    // States: a random walk (level), an AR(1) and a lag of the level. Observables: level plus
    // the AR state, and the AR state alone with noise.
    let t = DMatrix::from_row_slice(3, 3, &[1.0, 0.0, 0.0, 0.0, 0.7, 0.0, 1.0, 0.0, 0.0]);
    let r = DMatrix::from_row_slice(3, 2, &[1.0, 0.0, 0.3, 1.0, 0.0, 0.0]);
    let q = DMatrix::from_row_slice(2, 2, &[0.5, 0.1, 0.1, 0.8]);
    let z = DMatrix::from_row_slice(2, 3, &[1.0, 1.0, 0.0, 0.0, 1.0, 0.5]);
    let d = DVector::from_vec(vec![2.0, -1.0]);
    let hm = DMatrix::from_row_slice(2, 2, &[0.2, 0.05, 0.05, 0.3]);
    let model = StateSpaceModel { t, r, q, d, z, hm };
    let mut y = data(60, 9, 2);
    y[(0, 1)] = f64::NAN;
    y[(4, 0)] = f64::NAN;
    let params = KalmanParams::default();
    let init = initial_state(&model, &params).unwrap();
    assert_eq!(init.diffuse_rank, 1);
    let f = filter(&model, &y, &params).unwrap();
    assert!(f.n_diffuse >= 1);
    let s = smooth(&model, &f).unwrap();
    let pinf = init.p_inf.clone().unwrap();
    let kappa = 1e7;
    let p0 = &init.p_star + &pinf * kappa;
    let st = stacked(&model, &y, &p0);
    let q = init.diffuse_rank as f64;
    let dk = f.loglik + f.diffuse_log_f_inf - f.n_diffuse as f64 * super::filter::HALF_LOG_2PI;
    let limit = st.loglik + 0.5 * q * kappa.ln();
    assert!((dk - limit).abs() < 1e-5 * dk.abs(), "{dk} vs {limit}");
    // Smoothed moments from period 1 on (alpha_0's diffuse part has variance of order kappa in
    // the directions the data cannot see; from period 1 on every state is pinned down).
    for t in 1..=9 {
        assert!(
            relv(&s.states[t], &st.mean[t]) < 1e-5,
            "diffuse state {t}: {} vs {}",
            s.states[t],
            st.mean[t]
        );
        assert!(rel(&s.state_var[t], &st.var[t]) < 1e-5, "diffuse var {t}");
    }
    for t in 0..9 {
        assert!(
            relv(&s.shocks[t], &st.e_mean[t]) < 1e-5,
            "diffuse shock {t}"
        );
        assert!(
            rel(&s.shock_var[t], &st.e_var[t]) < 1e-5,
            "diffuse shock var {t}"
        );
    }
    let dec = decompose(&model, &s);
    for t in 1..=9 {
        let sum = &dec.initial[t - 1] + dec.shocks[t - 1].column_sum();
        assert!(relv(&sum, &s.states[t]) < 1e-10, "decomposition {t}");
    }
}

#[test]
fn chandrasekhar_matches_the_univariate_filter() {
    for (seed, n, p, correlated) in [(7u64, 6, 2, false), (8, 12, 3, true), (9, 30, 7, false)] {
        let model = system(seed, n, n, p, 0.95, correlated);
        let y = data(seed + 1, 60, p);
        let params = KalmanParams::default();
        let slow = filter_with_store_false(&model, &y);
        let fast = loglik(&model, &y, &params).unwrap();
        assert!(
            (fast - slow).abs() < 1e-10 * slow.abs(),
            "n={n}: {fast} vs {slow}"
        );
    }
}

fn filter_with_store_false(model: &StateSpaceModel, y: &DMatrix<f64>) -> f64 {
    super::filter::filter_with(model, y, &KalmanParams::default(), false)
        .unwrap()
        .loglik
}

#[test]
fn bad_input_is_a_typed_error() {
    let mut model = system(11, 2, 1, 1, 0.5, false);
    model.q[(0, 0)] = -1.0;
    let y = data(1, 5, 1);
    assert!(matches!(
        filter(&model, &y, &KalmanParams::default()),
        Err(KalmanError::NotCovariance { .. })
    ));
    let model = system(11, 2, 1, 1, 0.5, false);
    let y2 = data(1, 5, 2);
    assert!(matches!(
        filter(&model, &y2, &KalmanParams::default()),
        Err(KalmanError::Shape { .. })
    ));
}
