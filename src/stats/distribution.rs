//! The prior distributions of spec §10, validated at construction.

/// A distribution in its natural parameters. Construct it with the checked constructors; the
/// fields are public for reading (and for matching), and every constructor guarantees that they
/// describe a proper distribution (except [`Distribution::Flat`], which is improper on purpose).
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Distribution {
    /// Normal with mean and standard deviation (sd > 0).
    Normal { mean: f64, sd: f64 },
    /// Beta on (0, 1) with shape parameters a, b > 0.
    Beta { a: f64, b: f64 },
    /// Gamma on (0, inf) with shape > 0 and scale > 0 (not rate).
    Gamma { shape: f64, scale: f64 },
    /// Inverse gamma on (0, inf): density proportional to x^(-shape-1) exp(-scale/x).
    InvGamma { shape: f64, scale: f64 },
    /// Uniform on [lo, hi], lo < hi.
    Uniform { lo: f64, hi: f64 },
    /// A constant density on the whole real line: no prior information (maximum likelihood).
    Flat,
}

/// Why a set of arguments does not describe a distribution.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum DistributionError {
    /// An argument is NaN or infinite.
    NotFinite { argument: &'static str, value: f64 },
    /// An argument that must be positive is not.
    NotPositive { argument: &'static str, value: f64 },
    /// A beta mean outside (0, 1).
    BetaMeanOutside { mean: f64 },
    /// A beta standard deviation at or above sqrt(mean (1 - mean)), the largest any beta has.
    BetaSdTooLarge { mean: f64, sd: f64, limit: f64 },
    /// An interval with lo >= hi.
    EmptyInterval { lo: f64, hi: f64 },
}

impl std::fmt::Display for DistributionError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match *self {
            DistributionError::NotFinite { argument, value } => {
                write!(f, "`{argument}` is {value}, not a finite number")
            }
            DistributionError::NotPositive { argument, value } => {
                write!(f, "`{argument}` must be positive, not {value}")
            }
            DistributionError::BetaMeanOutside { mean } => {
                write!(f, "a beta distribution's mean lies in (0, 1), not {mean}")
            }
            DistributionError::BetaSdTooLarge { mean, sd, limit } => write!(
                f,
                "no beta distribution with mean {mean} has sd {sd}: it must be below {limit:.6}"
            ),
            DistributionError::EmptyInterval { lo, hi } => {
                write!(f, "the interval [{lo}, {hi}] is empty")
            }
        }
    }
}

impl std::error::Error for DistributionError {}

fn finite(argument: &'static str, value: f64) -> Result<f64, DistributionError> {
    if value.is_finite() {
        Ok(value)
    } else {
        Err(DistributionError::NotFinite { argument, value })
    }
}

fn positive(argument: &'static str, value: f64) -> Result<f64, DistributionError> {
    let value = finite(argument, value)?;
    if value > 0.0 {
        Ok(value)
    } else {
        Err(DistributionError::NotPositive { argument, value })
    }
}

impl Distribution {
    /// `normal(mean, sd)`.
    pub fn normal(mean: f64, sd: f64) -> Result<Self, DistributionError> {
        Ok(Distribution::Normal {
            mean: finite("mean", mean)?,
            sd: positive("sd", sd)?,
        })
    }

    /// `beta(a, b)`.
    pub fn beta(a: f64, b: f64) -> Result<Self, DistributionError> {
        Ok(Distribution::Beta {
            a: positive("a", a)?,
            b: positive("b", b)?,
        })
    }

    /// `beta(mean, sd)`: the beta distribution with these two moments.
    pub fn beta_from_moments(mean: f64, sd: f64) -> Result<Self, DistributionError> {
        let mean = finite("mean", mean)?;
        let sd = positive("sd", sd)?;
        if !(mean > 0.0 && mean < 1.0) {
            return Err(DistributionError::BetaMeanOutside { mean });
        }
        let limit = (mean * (1.0 - mean)).sqrt();
        if sd >= limit {
            return Err(DistributionError::BetaSdTooLarge { mean, sd, limit });
        }
        let k = mean * (1.0 - mean) / (sd * sd) - 1.0;
        Self::beta(mean * k, (1.0 - mean) * k)
    }

    /// `gamma(shape, scale)`.
    pub fn gamma(shape: f64, scale: f64) -> Result<Self, DistributionError> {
        Ok(Distribution::Gamma {
            shape: positive("shape", shape)?,
            scale: positive("scale", scale)?,
        })
    }

    /// `gamma(mean, sd)`.
    pub fn gamma_from_moments(mean: f64, sd: f64) -> Result<Self, DistributionError> {
        let mean = positive("mean", mean)?;
        let sd = positive("sd", sd)?;
        Self::gamma(mean * mean / (sd * sd), sd * sd / mean)
    }

    /// `invgamma(shape, scale)`.
    pub fn inv_gamma(shape: f64, scale: f64) -> Result<Self, DistributionError> {
        Ok(Distribution::InvGamma {
            shape: positive("shape", shape)?,
            scale: positive("scale", scale)?,
        })
    }

    /// `invgamma(mean, sd)`: shape = 2 + mean^2/sd^2 (so the variance exists), scale = mean (shape - 1).
    pub fn inv_gamma_from_moments(mean: f64, sd: f64) -> Result<Self, DistributionError> {
        let mean = positive("mean", mean)?;
        let sd = positive("sd", sd)?;
        let shape = 2.0 + mean * mean / (sd * sd);
        Self::inv_gamma(shape, mean * (shape - 1.0))
    }

    /// `uniform(lo, hi)`.
    pub fn uniform(lo: f64, hi: f64) -> Result<Self, DistributionError> {
        let lo = finite("lo", lo)?;
        let hi = finite("hi", hi)?;
        if lo < hi {
            Ok(Distribution::Uniform { lo, hi })
        } else {
            Err(DistributionError::EmptyInterval { lo, hi })
        }
    }

    /// The closed support (lo, hi); infinite ends are `f64::INFINITY` with a sign.
    pub fn support(&self) -> (f64, f64) {
        match *self {
            Distribution::Normal { .. } | Distribution::Flat => (f64::NEG_INFINITY, f64::INFINITY),
            Distribution::Beta { .. } => (0.0, 1.0),
            Distribution::Gamma { .. } | Distribution::InvGamma { .. } => (0.0, f64::INFINITY),
            Distribution::Uniform { lo, hi } => (lo, hi),
        }
    }

    /// Mean, when it exists (`None` for `Flat` and an inverse gamma with shape <= 1).
    pub fn mean(&self) -> Option<f64> {
        match *self {
            Distribution::Normal { mean, .. } => Some(mean),
            Distribution::Beta { a, b } => Some(a / (a + b)),
            Distribution::Gamma { shape, scale } => Some(shape * scale),
            Distribution::InvGamma { shape, scale } => (shape > 1.0).then(|| scale / (shape - 1.0)),
            Distribution::Uniform { lo, hi } => Some(0.5 * (lo + hi)),
            Distribution::Flat => None,
        }
    }

    /// Standard deviation, when it exists.
    pub fn sd(&self) -> Option<f64> {
        match *self {
            Distribution::Normal { sd, .. } => Some(sd),
            Distribution::Beta { a, b } => Some((a * b / ((a + b).powi(2) * (a + b + 1.0))).sqrt()),
            Distribution::Gamma { shape, scale } => Some(shape.sqrt() * scale),
            Distribution::InvGamma { shape, scale } => {
                (shape > 2.0).then(|| scale / ((shape - 1.0) * (shape - 2.0).sqrt()))
            }
            Distribution::Uniform { lo, hi } => Some((hi - lo) / 12f64.sqrt()),
            Distribution::Flat => None,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // The moment conversions must give back the moments they were given (the closed forms of
    // the module documentation, common practice).
    #[test]
    fn moment_conversions_round_trip() {
        for (mean, sd) in [(0.6, 0.2), (0.5, 0.01), (0.05, 0.02)] {
            let d = Distribution::beta_from_moments(mean, sd).unwrap();
            assert!((d.mean().unwrap() - mean).abs() < 1e-14);
            assert!((d.sd().unwrap() - sd).abs() < 1e-14 * sd.max(1.0));
        }
        for (mean, sd) in [(1.5, 0.4), (0.01, 0.5), (200.0, 3.0)] {
            let g = Distribution::gamma_from_moments(mean, sd).unwrap();
            assert!((g.mean().unwrap() / mean - 1.0).abs() < 1e-14);
            assert!((g.sd().unwrap() / sd - 1.0).abs() < 1e-14);
            let ig = Distribution::inv_gamma_from_moments(mean, sd).unwrap();
            assert!((ig.mean().unwrap() / mean - 1.0).abs() < 1e-14);
            assert!((ig.sd().unwrap() / sd - 1.0).abs() < 1e-13);
        }
    }

    #[test]
    fn invalid_arguments_are_typed_errors() {
        assert_eq!(
            Distribution::beta_from_moments(1.2, 0.1),
            Err(DistributionError::BetaMeanOutside { mean: 1.2 })
        );
        assert!(matches!(
            Distribution::beta_from_moments(0.5, 0.5),
            Err(DistributionError::BetaSdTooLarge { .. })
        ));
        assert!(matches!(
            Distribution::gamma(-1.0, 1.0),
            Err(DistributionError::NotPositive {
                argument: "shape",
                ..
            })
        ));
        assert!(matches!(
            Distribution::uniform(2.0, 1.0),
            Err(DistributionError::EmptyInterval { .. })
        ));
        assert!(matches!(
            Distribution::normal(f64::NAN, 1.0),
            Err(DistributionError::NotFinite { .. })
        ));
    }
}
