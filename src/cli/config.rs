//! Raw arguments validated into typed settings before any work (a wrong command line is exit 2).

use super::args::SolveOptionArgs;
use super::Failure;

/// Where the stable-root threshold comes from, in order of precedence.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum ThresholdChoice {
    /// The file's `options` (`threshold`, else `discount`), else 1.
    FromFile,
    /// `--discount B`: threshold 1/sqrt(B).
    Discount(f64),
    /// `--threshold X`.
    Explicit(f64),
}

/// Validated options shared by every solving command.
#[derive(Debug, Clone, PartialEq)]
pub struct SolveSettings {
    /// `--set NAME=VALUE`, in command-line order (names are checked against the model later).
    pub overrides: Vec<(String, f64)>,
    pub threshold: ThresholdChoice,
    /// Roots on the boundary count as stable (spec §7 default) unless `--boundary-unstable`.
    pub boundary_stable: bool,
    pub timings: bool,
    /// `--regime` (default rule).
    pub regime: saddle::policy::Regime,
}

impl SolveSettings {
    pub fn from_args(a: &SolveOptionArgs) -> Result<Self, Failure> {
        let overrides = a
            .set
            .iter()
            .map(|s| parse_set(s))
            .collect::<Result<Vec<_>, _>>()?;
        let threshold = match (a.discount, a.threshold) {
            (Some(b), _) => {
                if !(b.is_finite() && b > 0.0) {
                    return Err(Failure::usage(format!(
                        "--discount must be a positive finite number, got {b}"
                    )));
                }
                ThresholdChoice::Discount(b)
            }
            (None, Some(x)) => {
                if !(x.is_finite() && x > 0.0) {
                    return Err(Failure::usage(format!(
                        "--threshold must be a positive finite number, got {x}"
                    )));
                }
                ThresholdChoice::Explicit(x)
            }
            (None, None) => ThresholdChoice::FromFile,
        };
        Ok(SolveSettings {
            overrides,
            threshold,
            boundary_stable: !a.boundary_unstable,
            timings: a.timings,
            regime: match a.regime {
                super::args::RegimeArg::Rule => saddle::policy::Regime::Rule,
                super::args::RegimeArg::Commitment => saddle::policy::Regime::Commitment,
                super::args::RegimeArg::Discretion => saddle::policy::Regime::Discretion,
            },
        })
    }
}

/// Parses `NAME=VALUE` with a finite numeric value.
pub fn parse_set(s: &str) -> Result<(String, f64), Failure> {
    let Some((name, value)) = s.split_once('=') else {
        return Err(Failure::usage(format!(
            "--set expects NAME=VALUE, got `{s}`"
        )));
    };
    let name = name.trim();
    if !is_identifier(name) {
        return Err(Failure::usage(format!(
            "--set: `{name}` is not a parameter name"
        )));
    }
    let v: f64 = value
        .trim()
        .parse()
        .map_err(|_| Failure::usage(format!("--set {name}: `{}` is not a number", value.trim())))?;
    if !v.is_finite() {
        return Err(Failure::usage(format!(
            "--set {name}: the value must be finite, got {v}"
        )));
    }
    Ok((name.to_string(), v))
}

/// One `--vary NAME=LO:HI:N` axis.
#[derive(Debug, Clone, PartialEq)]
pub struct Axis {
    pub name: String,
    pub lo: f64,
    pub hi: f64,
    pub n: usize,
}

/// Largest number of points on one sweep axis (a 2-D grid is at most its square).
pub const MAX_AXIS_POINTS: usize = 10_000;

pub fn parse_vary(s: &str) -> Result<Axis, Failure> {
    let bad = || Failure::usage(format!("--vary expects NAME=LO:HI:N, got `{s}`"));
    let (name, rest) = s.split_once('=').ok_or_else(bad)?;
    let name = name.trim();
    if !is_identifier(name) {
        return Err(bad());
    }
    let parts: Vec<&str> = rest.split(':').collect();
    if parts.len() != 3 {
        return Err(bad());
    }
    let lo: f64 = parts[0].trim().parse().map_err(|_| bad())?;
    let hi: f64 = parts[1].trim().parse().map_err(|_| bad())?;
    let n: usize = parts[2].trim().parse().map_err(|_| bad())?;
    if !lo.is_finite() || !hi.is_finite() {
        return Err(Failure::usage(format!(
            "--vary {name}: LO and HI must be finite"
        )));
    }
    if n == 0 || n > MAX_AXIS_POINTS {
        return Err(Failure::usage(format!(
            "--vary {name}: N must be between 1 and {MAX_AXIS_POINTS}, got {n}"
        )));
    }
    if n == 1 && lo != hi {
        return Err(Failure::usage(format!(
            "--vary {name}: N = 1 needs LO equal to HI"
        )));
    }
    Ok(Axis {
        name: name.to_string(),
        lo,
        hi,
        n,
    })
}

impl Axis {
    /// The `n` evenly spaced values from `lo` to `hi` inclusive (the ends exact).
    pub fn values(&self) -> Vec<f64> {
        if self.n == 1 {
            return vec![self.lo];
        }
        let step = (self.hi - self.lo) / (self.n - 1) as f64;
        (0..self.n)
            .map(|i| {
                if i + 1 == self.n {
                    self.hi
                } else {
                    self.lo + step * i as f64
                }
            })
            .collect()
    }
}

fn is_identifier(s: &str) -> bool {
    let mut chars = s.chars();
    matches!(chars.next(), Some(c) if c.is_ascii_alphabetic() || c == '_')
        && chars.all(|c| c.is_ascii_alphanumeric() || c == '_')
}

/// The positions of `--vars` names among the model's `variables`, in the order given (`None`
/// when no name was given: every variable). An unknown name is a command-line error naming the
/// variables (the first 20).
pub fn select_variables(
    names: &[String],
    variables: &[String],
) -> Result<Option<Vec<usize>>, Failure> {
    if names.is_empty() {
        return Ok(None);
    }
    let mut out = Vec::with_capacity(names.len());
    for n in names {
        match variables.iter().position(|v| v == n.trim()) {
            Some(i) => out.push(i),
            None => {
                let shown: Vec<&str> = variables.iter().take(20).map(|s| s.as_str()).collect();
                return Err(Failure::usage(format!(
                    "--vars: `{}` is not an endogenous variable of the model (they are {}{})",
                    n.trim(),
                    shown.join(", "),
                    if variables.len() > 20 { ", ..." } else { "" }
                )));
            }
        }
    }
    Ok(Some(out))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn set_and_vary_parse_and_reject() {
        assert_eq!(
            parse_set("phi_pi=1.5").unwrap(),
            ("phi_pi".to_string(), 1.5)
        );
        assert!(parse_set("phi_pi").is_err());
        assert!(parse_set("phi_pi=nan").is_err());
        assert!(parse_set("phi_pi=inf").is_err());
        assert!(parse_set("1x=2").is_err());
        let a = parse_vary("phi_pi=0:3:4").unwrap();
        assert_eq!(a.values(), vec![0.0, 1.0, 2.0, 3.0]);
        assert!(parse_vary("phi_pi=0:3").is_err());
        assert!(parse_vary("phi_pi=0:3:0").is_err());
        assert!(parse_vary("phi_pi=0:inf:3").is_err());
    }
}
