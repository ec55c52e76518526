//! The draws file of `saddle estimate --draws-out`, read back for bands and for merged
//! diagnostics. One row per kept draw:
//!
//! ```text
//!   seed,chain,draw,NAME_1,...,NAME_d,logpost        (x_s = (NAME_1 .. NAME_d) of draw s)
//! ```
//!
//! A chain is identified by (seed, chain): files of runs with other seeds (other machines, any
//! job scheduler) concatenated with `cat`, or given as several files, separate into their chains
//! correctly. A line equal to the header (the second file's header after `cat`) is skipped.
//! Files written before the `seed` column existed (`chain,draw,...`) are read with no seed.
//! Columns are checked against a model by [`resolve`]: each NAME is a parameter, `sd(e)` of an
//! innovation or `sd(o)` of an observable's measurement error (the targets of spec §10).

use crate::model::{Model, PriorTarget};

/// Largest draws file read (bytes).
pub const MAX_DRAWS_BYTES: usize = 256 << 20;

/// Why a draws file cannot be used. Lines and columns count from 1.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum DrawsError {
    #[error("the file is empty (it needs a header `seed,chain,draw,NAME...,logpost`)")]
    Empty,
    #[error("the file is larger than {MAX_DRAWS_BYTES} bytes")]
    TooLarge,
    #[error("{line}:{column}: {what}")]
    Header {
        line: usize,
        column: usize,
        what: String,
    },
    #[error("{line}:{column} ({header}): {what}")]
    Cell {
        line: usize,
        column: usize,
        header: String,
        what: String,
    },
    #[error("the file has a header but no draws")]
    NoDraws,
    #[error("1:{column}: `{name}` is not a parameter, `sd(innovation)` or `sd(observable)` of the model{}", suggestion.as_ref().map(|s| format!("; did you mean `{s}`?")).unwrap_or_default())]
    UnknownColumn {
        column: usize,
        name: String,
        suggestion: Option<String>,
    },
    #[error("the files estimate different quantities: {first} and {other}")]
    Mismatch { first: String, other: String },
}

/// One chain of a draws file: its run's seed (None in a file without the column) and number.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub struct ChainId {
    pub seed: Option<u64>,
    pub chain: u64,
}

/// The draws of one or more files.
#[derive(Debug, Clone, PartialEq)]
pub struct Draws {
    /// The estimated quantities (header order).
    pub names: Vec<String>,
    /// Chain of each row.
    pub chain: Vec<ChainId>,
    /// Draw number of each row within its chain.
    pub draw: Vec<u64>,
    /// x of each row, `names.len()` values.
    pub x: Vec<Vec<f64>>,
    /// log prior + log likelihood of each row.
    pub logpost: Vec<f64>,
    /// Columns before the first quantity (3 with a `seed` column, 2 without).
    pub offset: usize,
}

/// The header of a draws file for `names`, with its newline.
pub fn header(names: &[String]) -> String {
    let mut h = String::from("seed,chain,draw");
    for n in names {
        h.push(',');
        h.push_str(n);
    }
    h.push_str(",logpost\n");
    h
}

fn cells(line: &str) -> Vec<&str> {
    line.split(',').map(str::trim).collect()
}

/// Reads a draws file. Returns the draws, or the first problem with its line and column.
pub fn read_draws(bytes: &[u8]) -> Result<Draws, DrawsError> {
    if bytes.len() > MAX_DRAWS_BYTES {
        return Err(DrawsError::TooLarge);
    }
    let text = std::str::from_utf8(bytes).map_err(|e| {
        let upto = &bytes[..e.valid_up_to()];
        let line = upto.iter().filter(|&&b| b == b'\n').count() + 1;
        let column = upto.iter().rev().take_while(|&&b| b != b'\n').count() + 1;
        DrawsError::Header {
            line,
            column,
            what: "the file is not UTF-8 text".into(),
        }
    })?;
    let mut lines = text.lines().enumerate();
    let (_, head) = lines
        .by_ref()
        .find(|(_, l)| !l.trim().is_empty())
        .ok_or(DrawsError::Empty)?;
    let head = head.trim_end_matches('\r');
    let h = cells(head);
    let with_seed = h.first() == Some(&"seed");
    let lead: &[&str] = if with_seed {
        &["seed", "chain", "draw"]
    } else {
        &["chain", "draw"]
    };
    for (k, want) in lead.iter().enumerate() {
        if h.get(k) != Some(want) {
            return Err(DrawsError::Header {
                line: 1,
                column: k + 1,
                what: format!(
                    "expected the column `{want}` (the header is `seed,chain,draw,NAME...,logpost`), found `{}`",
                    h.get(k).copied().unwrap_or("")
                ),
            });
        }
    }
    if h.last() != Some(&"logpost") || h.len() < lead.len() + 2 {
        return Err(DrawsError::Header {
            line: 1,
            column: h.len(),
            what: "the last column must be `logpost`, after at least one estimated quantity".into(),
        });
    }
    let names: Vec<String> = h[lead.len()..h.len() - 1]
        .iter()
        .map(|s| s.to_string())
        .collect();
    for (k, n) in names.iter().enumerate() {
        let column = lead.len() + k + 1;
        if n.is_empty() {
            return Err(DrawsError::Header {
                line: 1,
                column,
                what: "an empty column name".into(),
            });
        }
        if names[..k].contains(n) {
            return Err(DrawsError::Header {
                line: 1,
                column,
                what: format!("`{n}` appears twice"),
            });
        }
    }
    let width = h.len();
    let mut d = Draws {
        names,
        chain: Vec::new(),
        draw: Vec::new(),
        x: Vec::new(),
        logpost: Vec::new(),
        offset: lead.len(),
    };
    for (i, raw) in lines {
        let line_no = i + 1;
        let line = raw.trim_end_matches('\r');
        if line.trim().is_empty() || line == head {
            continue;
        }
        let c = cells(line);
        if c.len() != width {
            return Err(DrawsError::Cell {
                line: line_no,
                column: c.len().min(width) + 1,
                header: h.get(c.len().min(width)).unwrap_or(&"").to_string(),
                what: format!("{} cells where the header has {width}", c.len()),
            });
        }
        let integer = |k: usize| -> Result<u64, DrawsError> {
            c[k].parse::<u64>().map_err(|_| DrawsError::Cell {
                line: line_no,
                column: k + 1,
                header: h[k].to_string(),
                what: format!("`{}` is not a whole number", c[k]),
            })
        };
        let number = |k: usize, finite: bool| -> Result<f64, DrawsError> {
            match c[k].parse::<f64>() {
                Ok(v) if v.is_finite() || (!finite && v == f64::NEG_INFINITY) => Ok(v),
                _ => Err(DrawsError::Cell {
                    line: line_no,
                    column: k + 1,
                    header: h[k].to_string(),
                    what: format!("`{}` is not a finite number", c[k]),
                }),
            }
        };
        let seed = if with_seed { Some(integer(0)?) } else { None };
        let o = lead.len();
        let chain = integer(o - 2)?;
        let draw = integer(o - 1)?;
        let mut x = Vec::with_capacity(d.names.len());
        for k in o..width - 1 {
            x.push(number(k, true)?);
        }
        d.logpost.push(number(width - 1, false)?);
        d.chain.push(ChainId { seed, chain });
        d.draw.push(draw);
        d.x.push(x);
    }
    if d.x.is_empty() {
        return Err(DrawsError::NoDraws);
    }
    Ok(d)
}

impl Draws {
    /// Appends the rows of `other` (same quantities in the same order). Errors otherwise.
    pub fn merge(&mut self, other: Draws) -> Result<(), DrawsError> {
        if other.names != self.names {
            return Err(DrawsError::Mismatch {
                first: self.names.join(","),
                other: other.names.join(","),
            });
        }
        self.chain.extend(other.chain);
        self.draw.extend(other.draw);
        self.x.extend(other.x);
        self.logpost.extend(other.logpost);
        Ok(())
    }

    /// Number of rows.
    pub fn len(&self) -> usize {
        self.x.len()
    }

    /// Whether there are no rows.
    pub fn is_empty(&self) -> bool {
        self.x.is_empty()
    }

    /// The chains, ordered by (seed, chain); each with its row indices ordered by draw number
    /// (rows of a chain interleave with other chains' in a file written by parallel chains).
    pub fn chains(&self) -> Vec<(ChainId, Vec<usize>)> {
        let mut map: std::collections::BTreeMap<ChainId, Vec<usize>> = Default::default();
        for (r, id) in self.chain.iter().enumerate() {
            map.entry(*id).or_default().push(r);
        }
        map.into_iter()
            .map(|(id, mut rows)| {
                rows.sort_by_key(|&r| self.draw[r]);
                (id, rows)
            })
            .collect()
    }
}

/// The target of each column of `names` in `model`: a parameter, `sd(e)` or `sd(o)`. Errors name
/// the first column that is none of them (`offset` columns come before the first name).
pub fn resolve(
    model: &Model,
    names: &[String],
    offset: usize,
) -> Result<Vec<PriorTarget>, DrawsError> {
    let mut out = Vec::with_capacity(names.len());
    for (k, n) in names.iter().enumerate() {
        let inner = n
            .strip_prefix("sd(")
            .and_then(|s| s.strip_suffix(')'))
            .map(str::trim);
        let t = match inner {
            Some(e) => model
                .exogenous
                .iter()
                .position(|x| x.name == e)
                .map(PriorTarget::ShockSd)
                .or_else(|| {
                    model
                        .observables
                        .iter()
                        .position(|o| o.name == e)
                        .map(PriorTarget::MeasurementSd)
                }),
            None => model.parameter_index(n).map(PriorTarget::Parameter),
        };
        match t {
            Some(t) => out.push(t),
            None => {
                let mut candidates: Vec<String> =
                    model.parameters.iter().map(|p| p.name.clone()).collect();
                candidates.extend(model.exogenous.iter().map(|e| format!("sd({})", e.name)));
                candidates.extend(model.observables.iter().map(|o| format!("sd({})", o.name)));
                return Err(DrawsError::UnknownColumn {
                    column: k + offset + 1,
                    name: n.clone(),
                    suggestion: crate::model::check::did_you_mean(
                        n,
                        candidates.iter().map(|s| s.as_str()),
                    )
                    .map(str::to_string),
                });
            }
        }
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn reads_rows_skips_a_repeated_header_and_splits_chains_by_seed() {
        let f = "seed,chain,draw,rho,sd(e),logpost\n\
                 1,1,1,0.5,0.1,-3\n1,2,1,0.6,0.2,-4\n1,1,2,0.7,0.3,-5\n\
                 seed,chain,draw,rho,sd(e),logpost\n2,1,1,0.8,0.4,-6\n";
        let d = read_draws(f.as_bytes()).unwrap();
        assert_eq!(d.names, vec!["rho", "sd(e)"]);
        assert_eq!(d.len(), 4);
        let ch = d.chains();
        assert_eq!(ch.len(), 3);
        assert_eq!(ch[0].1, vec![0, 2]);
        assert_eq!(
            ch[2].0,
            ChainId {
                seed: Some(2),
                chain: 1
            }
        );
    }

    #[test]
    fn bad_cells_are_named_by_line_and_column() {
        let e = read_draws(b"seed,chain,draw,rho,logpost\n1,1,1,abc,-2\n").unwrap_err();
        assert_eq!(e.to_string(), "2:4 (rho): `abc` is not a finite number");
        let e = read_draws(b"seed,chain,draw,rho,logpost\n1,1,1,2\n").unwrap_err();
        assert!(e.to_string().starts_with("2:5 (logpost)"), "{e}");
        let e = read_draws(b"chain,x,rho,logpost\n").unwrap_err();
        assert!(e.to_string().starts_with("1:2:"), "{e}");
        assert_eq!(
            read_draws(b"seed,chain,draw,rho,logpost\n").unwrap_err(),
            DrawsError::NoDraws
        );
    }
}
