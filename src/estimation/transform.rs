//! Maps between an estimated quantity x on its interval (lo, hi) and an unconstrained z in R:
//!
//! ```text
//!   (-inf, inf):  x = z                          log |dx/dz| = 0
//!   (lo, inf):    x = lo + e^z                   log |dx/dz| = z
//!   (-inf, hi):   x = hi - e^z                   log |dx/dz| = z
//!   (lo, hi):     x = lo + (hi - lo) s(z),  s(z) = 1 / (1 + e^-z)
//!                 log |dx/dz| = log (hi - lo) - log(1 + e^-z) - log(1 + e^z)
//! ```
//!
//! The optimiser searches z for the maximum of p(x(z)) (the same point as the maximum of p in x:
//! a change of variables moves no maximum of a function), and the Metropolis-Hastings chains
//! sample z from p(x(z)) |dx/dz| (the density of z, so that x(z) has density p). Reported numbers
//! are always in x.

/// The map of one quantity (see the module doc).
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Transform {
    Identity,
    /// x = lo + e^z.
    Lower {
        lo: f64,
    },
    /// x = hi - e^z.
    Upper {
        hi: f64,
    },
    /// x = lo + (hi - lo) / (1 + e^-z).
    Interval {
        lo: f64,
        hi: f64,
    },
}

/// log(1 + e^x) without overflow.
fn softplus(x: f64) -> f64 {
    if x > 30.0 {
        x + (-x).exp()
    } else {
        x.exp().ln_1p()
    }
}

impl Transform {
    /// The map for the open interval (lo, hi) (infinite ends allowed).
    pub fn for_interval(lo: f64, hi: f64) -> Transform {
        match (lo.is_finite(), hi.is_finite()) {
            (false, false) => Transform::Identity,
            (true, false) => Transform::Lower { lo },
            (false, true) => Transform::Upper { hi },
            (true, true) => Transform::Interval { lo, hi },
        }
    }

    /// x(z).
    pub fn to_x(&self, z: f64) -> f64 {
        match *self {
            Transform::Identity => z,
            Transform::Lower { lo } => lo + z.exp(),
            Transform::Upper { hi } => hi - z.exp(),
            Transform::Interval { lo, hi } => {
                let s = if z >= 0.0 {
                    1.0 / (1.0 + (-z).exp())
                } else {
                    let e = z.exp();
                    e / (1.0 + e)
                };
                lo + (hi - lo) * s
            }
        }
    }

    /// z(x); -inf or +inf at the ends of the interval, NaN outside it.
    pub fn to_z(&self, x: f64) -> f64 {
        match *self {
            Transform::Identity => x,
            Transform::Lower { lo } => {
                if x < lo {
                    f64::NAN
                } else {
                    (x - lo).ln()
                }
            }
            Transform::Upper { hi } => {
                if x > hi {
                    f64::NAN
                } else {
                    (hi - x).ln()
                }
            }
            Transform::Interval { lo, hi } => {
                if x < lo || x > hi {
                    f64::NAN
                } else {
                    (x - lo).ln() - (hi - x).ln()
                }
            }
        }
    }

    /// log |dx/dz| at z.
    pub fn log_jacobian(&self, z: f64) -> f64 {
        match *self {
            Transform::Identity => 0.0,
            Transform::Lower { .. } | Transform::Upper { .. } => z,
            Transform::Interval { lo, hi } => (hi - lo).ln() - softplus(-z) - softplus(z),
        }
    }

    /// dx/dz at z.
    pub fn derivative(&self, z: f64) -> f64 {
        match *self {
            Transform::Identity => 1.0,
            Transform::Lower { .. } => z.exp(),
            Transform::Upper { .. } => -z.exp(),
            Transform::Interval { .. } => self.log_jacobian(z).exp(),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // Round trips and the Jacobian against a central difference of x(z) (common practice).
    #[test]
    fn round_trip_and_jacobian() {
        let maps = [
            Transform::Identity,
            Transform::Lower { lo: 0.0 },
            Transform::Upper { hi: 3.0 },
            Transform::Interval { lo: 0.2, hi: 0.9 },
            Transform::for_interval(0.0, 1.0),
        ];
        for t in maps {
            for z in [-3.0, -0.4, 0.0, 0.7, 2.5] {
                let x = t.to_x(z);
                assert!((t.to_z(x) - z).abs() < 1e-12, "{t:?} {z}");
                let h = 1e-6;
                let num = (t.to_x(z + h) - t.to_x(z - h)) / (2.0 * h);
                assert!(
                    (num.abs().ln() - t.log_jacobian(z)).abs() < 1e-8,
                    "{t:?} {z}"
                );
                assert!((t.derivative(z) - num).abs() < 1e-8 * num.abs().max(1.0));
            }
        }
        // Far out the logit neither overflows nor leaves the interval.
        let t = Transform::Interval { lo: 0.0, hi: 1.0 };
        assert!(t.to_x(800.0) <= 1.0 && t.to_x(-800.0) >= 0.0);
        assert!(t.log_jacobian(800.0).is_finite());
    }
}
