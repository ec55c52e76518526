//! Probability distributions used as priors (spec §10), in their natural parameters.
//!
//! Every distribution is that of the named quantity itself (spec §10): `InvGamma { shape, scale }`
//! has density proportional to x^(-shape-1) exp(-scale/x) on x > 0, and `Gamma { shape, scale }`
//! density proportional to x^(shape-1) exp(-x/scale). The constructors `*_from_moments` convert a
//! mean and a standard deviation to natural parameters with the closed forms of the moments
//! (common practice; e.g. Gelman et al. 2013, Bayesian Data Analysis, appendix A):
//!
//! - beta: with v = sd^2 < m(1-m), k = m(1-m)/v - 1, a = m k, b = (1-m) k;
//! - gamma: shape = m^2 / sd^2, scale = sd^2 / m;
//! - inverse gamma: mean = scale/(shape-1), var = mean^2/(shape-2), so
//!   shape = 2 + m^2/sd^2 and scale = m (shape - 1).
//!
//! This module knows nothing of models: the front end calls it to validate a `priors` item, and
//! estimation to evaluate densities.

pub mod distribution;

pub use distribution::{Distribution, DistributionError};
