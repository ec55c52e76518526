//! Convergence diagnostics and posterior summaries of several chains of draws of one quantity.
//!
//! Rank-normalised split R-hat and bulk effective sample size (Vehtari, Gelman, Simpson,
//! Carpenter and Buerkner 2021, "Rank-normalization, folding, and localization: an improved R-hat
//! for assessing convergence of MCMC", Bayesian Analysis 16):
//!
//! ```text
//!   split:  each chain of N draws -> its first and last floor(N/2) draws (M -> 2M chains)
//!   z-score: r = rank over all draws (ties averaged), z = Phi^-1((r - 3/8) / (S + 1/4))
//!   R-hat(z) = sqrt(((n-1)/n W + B/n) / W),  W = mean chain variance, B = n var(chain means)
//!   rank R-hat = max(R-hat(z(split)), R-hat(z(|split - median(split)|)))
//!   bulk ESS = M n / tau,  tau = -1 + 2 sum_t rho_t  (Geyer 1992 initial monotone sequence,
//!   rho_t = 1 - (W - mean_m acov_m(t)) / var+,  var+ = (n-1)/n W + B/n)
//! ```
//!
//! with the same conventions as ArviZ (biased autocovariances divided by n, tau at least
//! 1/log10(M n)), whose numbers the tests reproduce.

use statrs::function::erf::erfc_inv;

/// Rank-normalised split R-hat of `chains` (each a slice of draws, equal lengths, at least 4
/// draws and 2 chains; NaN otherwise).
pub fn rhat(chains: &[&[f64]]) -> f64 {
    let n = chains.iter().map(|c| c.len()).min().unwrap_or(0);
    if chains.len() < 2 || n < 4 || chains.iter().any(|c| c.iter().any(|v| !v.is_finite())) {
        return f64::NAN;
    }
    let split = split_chains(chains);
    let bulk = rhat_basic(&z_scale(&split));
    let all: Vec<f64> = split.iter().flatten().copied().collect();
    let med = median(&all);
    let folded: Vec<Vec<f64>> = split
        .iter()
        .map(|c| c.iter().map(|v| (v - med).abs()).collect())
        .collect();
    let tail = rhat_basic(&z_scale(&folded));
    bulk.max(tail)
}

/// Bulk effective sample size of `chains` (at least 4 draws each; NaN otherwise).
pub fn ess_bulk(chains: &[&[f64]]) -> f64 {
    let n = chains.iter().map(|c| c.len()).min().unwrap_or(0);
    if chains.is_empty() || n < 4 || chains.iter().any(|c| c.iter().any(|v| !v.is_finite())) {
        return f64::NAN;
    }
    ess(&z_scale(&split_chains(chains)))
}

/// The first and last floor(n/2) draws of each chain (n the shortest chain's length).
fn split_chains(chains: &[&[f64]]) -> Vec<Vec<f64>> {
    let n = chains.iter().map(|c| c.len()).min().unwrap_or(0);
    let half = n / 2;
    let mut out = Vec::with_capacity(2 * chains.len());
    for c in chains {
        out.push(c[..half].to_vec());
    }
    for c in chains {
        out.push(c[n - half..n].to_vec());
    }
    out
}

/// Median (the mean of the two middle values for an even count).
fn median(v: &[f64]) -> f64 {
    let mut s = v.to_vec();
    s.sort_by(f64::total_cmp);
    let n = s.len();
    if n == 0 {
        return f64::NAN;
    }
    if !n.is_multiple_of(2) {
        s[n / 2]
    } else {
        0.5 * (s[n / 2 - 1] + s[n / 2])
    }
}

/// Normal scores of the ranks over all chains: Phi^-1((r - 3/8) / (S + 1/4)).
fn z_scale(chains: &[Vec<f64>]) -> Vec<Vec<f64>> {
    let mut idx: Vec<(f64, usize, usize)> = Vec::new();
    for (m, c) in chains.iter().enumerate() {
        for (i, &v) in c.iter().enumerate() {
            idx.push((v, m, i));
        }
    }
    idx.sort_by(|a, b| a.0.total_cmp(&b.0));
    let s = idx.len() as f64;
    let mut out: Vec<Vec<f64>> = chains.iter().map(|c| vec![0.0; c.len()]).collect();
    let mut k = 0;
    while k < idx.len() {
        let mut j = k;
        while j + 1 < idx.len() && idx[j + 1].0 == idx[k].0 {
            j += 1;
        }
        // Ranks k+1 ..= j+1 share their average.
        let rank = 0.5 * ((k + 1) + (j + 1)) as f64;
        let p = (rank - 0.375) / (s + 0.25);
        let z = normal_quantile(p);
        for e in &idx[k..=j] {
            out[e.1][e.2] = z;
        }
        k = j + 1;
    }
    out
}

/// Phi^-1(p) = -sqrt(2) erfc^-1(2p) for p in (0, 1).
pub fn normal_quantile(p: f64) -> f64 {
    -std::f64::consts::SQRT_2 * erfc_inv(2.0 * p)
}

fn mean(v: &[f64]) -> f64 {
    v.iter().sum::<f64>() / v.len() as f64
}

/// Sample variance with ddof = 1.
fn var1(v: &[f64]) -> f64 {
    let m = mean(v);
    v.iter().map(|x| (x - m) * (x - m)).sum::<f64>() / (v.len() as f64 - 1.0)
}

/// Plain R-hat of equal-length chains.
fn rhat_basic(chains: &[Vec<f64>]) -> f64 {
    let n = chains[0].len() as f64;
    let means: Vec<f64> = chains.iter().map(|c| mean(c)).collect();
    let b = n * var1(&means);
    let w = mean(&chains.iter().map(|c| var1(c)).collect::<Vec<_>>());
    ((b / w + n - 1.0) / n).sqrt()
}

/// Biased autocovariance at `lag` of one chain (divided by n).
fn autocov(c: &[f64], m: f64, lag: usize) -> f64 {
    let n = c.len();
    if lag >= n {
        return 0.0;
    }
    let mut s = 0.0;
    for i in 0..n - lag {
        s += (c[i] - m) * (c[i + lag] - m);
    }
    s / n as f64
}

/// ESS of equal-length chains (Geyer's initial monotone sequence; see the module doc).
fn ess(chains: &[Vec<f64>]) -> f64 {
    let m_chains = chains.len();
    let n = chains[0].len();
    let all: Vec<f64> = chains.iter().flatten().copied().collect();
    let (lo, hi) = all
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &v| {
            (a.min(v), b.max(v))
        });
    if hi - lo < 1e-15 {
        return all.len() as f64;
    }
    let means: Vec<f64> = chains.iter().map(|c| mean(c)).collect();
    let acov_mean = |lag: usize| -> f64 {
        chains
            .iter()
            .zip(&means)
            .map(|(c, &m)| autocov(c, m, lag))
            .sum::<f64>()
            / m_chains as f64
    };
    let nf = n as f64;
    let mean_var = acov_mean(0) * nf / (nf - 1.0);
    let mut var_plus = mean_var * (nf - 1.0) / nf;
    if m_chains > 1 {
        var_plus += var1(&means);
    }
    let rho = |lag: usize| 1.0 - (mean_var - acov_mean(lag)) / var_plus;
    let mut rho_t = vec![0.0; n];
    let mut even = 1.0;
    rho_t[0] = even;
    let mut odd = rho(1);
    rho_t[1] = odd;
    let mut t = 1;
    while t + 3 < n && even + odd > 0.0 {
        even = rho(t + 1);
        odd = rho(t + 2);
        if even + odd >= 0.0 {
            rho_t[t + 1] = even;
            rho_t[t + 2] = odd;
        }
        t += 2;
    }
    let max_t = t as isize - 2;
    if even > 0.0 && max_t + 1 >= 0 {
        rho_t[(max_t + 1) as usize] = even;
    }
    let mut t = 1isize;
    while t <= max_t - 2 {
        let (a, b) = (t as usize - 1, t as usize);
        if rho_t[b + 1] + rho_t[b + 2] > rho_t[a] + rho_t[b] {
            rho_t[b + 1] = (rho_t[a] + rho_t[b]) / 2.0;
            rho_t[b + 2] = rho_t[b + 1];
        }
        t += 2;
    }
    let total = (m_chains * n) as f64;
    let upto = (max_t + 1).max(0) as usize;
    let mut tau = -1.0 + 2.0 * rho_t[..upto.min(n)].iter().sum::<f64>();
    if upto < n {
        tau += rho_t[upto];
    }
    let tau = tau.max(1.0 / total.log10());
    total / tau
}

/// Quantile of sorted values by linear interpolation between order statistics (numpy's
/// default, Hyndman and Fan 1996 type 7).
pub fn quantile_sorted(s: &[f64], q: f64) -> f64 {
    if s.is_empty() {
        return f64::NAN;
    }
    let h = (s.len() - 1) as f64 * q;
    let lo = h.floor() as usize;
    let hi = (lo + 1).min(s.len() - 1);
    s[lo] + (h - lo as f64) * (s[hi] - s[lo])
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Deterministic draws for the ArviZ comparison (tests/reference/diagnostics_arviz.py builds
    /// the same numbers): chain m, draw i: an AR(1) with coefficient 0.8 driven by
    /// sin((i+1) * (m+1) * 0.7) plus a chain offset 0.1 m.
    pub fn fixed_draws(chains: usize, n: usize) -> Vec<Vec<f64>> {
        (0..chains)
            .map(|m| {
                let mut x = 0.0;
                (0..n)
                    .map(|i| {
                        x = 0.8 * x + ((i + 1) as f64 * (m + 1) as f64 * 0.7).sin();
                        x + 0.1 * m as f64
                    })
                    .collect()
            })
            .collect()
    }

    #[test]
    fn rank_normalised_rhat_and_bulk_ess_match_arviz() {
        // ArviZ 0.23.4, arviz.rhat(method="rank") and arviz.ess(method="bulk"), printed by
        // tests/reference/diagnostics_arviz.py.
        for (chains, n, want_rhat, want_ess) in REFERENCE {
            let d = fixed_draws(chains, n);
            let refs: Vec<&[f64]> = d.iter().map(|c| c.as_slice()).collect();
            let r = rhat(&refs);
            let e = ess_bulk(&refs);
            assert!(
                (r - want_rhat).abs() < 1e-10,
                "{chains}x{n}: rhat {r} vs {want_rhat}"
            );
            assert!(
                (e - want_ess).abs() < 1e-8 * want_ess,
                "{chains}x{n}: ess {e} vs {want_ess}"
            );
        }
    }

    const REFERENCE: [(usize, usize, f64, f64); 3] = [
        (2, 50, 1.13946163578058, 45.613545365527294),
        (4, 101, 1.2070477638109802, 229.02085229708968),
        (3, 400, 1.191298728646032, 589.9687919536196),
    ];

    #[test]
    fn quantiles_interpolate() {
        let s = [1.0, 2.0, 3.0, 4.0];
        assert_eq!(quantile_sorted(&s, 0.5), 2.5);
        assert_eq!(quantile_sorted(&s, 0.0), 1.0);
        assert_eq!(quantile_sorted(&s, 1.0), 4.0);
        assert!((quantile_sorted(&s, 0.05) - 1.15).abs() < 1e-15);
    }
}
