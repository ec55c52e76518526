//! Data files (spec §9): CSV (RFC 4180), UTF-8, a header row, the period labels in the first
//! column and one series per further column, named as an observable.
//!
//! ```text
//!   period,output_growth,inflation_obs      <- header: label column, then series names
//!   2031Q1,0.52,2.1                          <- one row per period, in time order
//!   2031Q2,,NA                               <- missing: empty, NA or NaN (any case)
//! ```
//!
//! [`read_data`] returns the series of the requested observables as an N x p matrix (NaN where
//! missing), their period labels, and notes (columns that are not observables). Every bad cell
//! is reported with its line and column ([`DataError::Cells`]), not only the first.

use nalgebra::DMatrix;
use thiserror::Error;

pub mod run;

/// Largest data file accepted (bytes): 64 MB is far beyond any macroeconomic sample.
pub const MAX_DATA_BYTES: usize = 64 << 20;

/// Most bad cells listed in one error (the count of the rest is given).
pub const MAX_REPORTED_CELLS: usize = 20;

/// One problem in a data file, with its 1-based line and column.
#[derive(Debug, Clone, PartialEq)]
pub struct CellProblem {
    pub line: usize,
    pub column: usize,
    /// The column's header (empty when unknown).
    pub header: String,
    pub what: String,
}

/// Why a data file could not be used.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum DataError {
    #[error("the data file is empty (it needs a header row and at least one row of data)")]
    Empty,
    #[error("the data file is larger than {MAX_DATA_BYTES} bytes")]
    TooLarge,
    #[error("the data file is not valid UTF-8 (line {line})")]
    NotUtf8 { line: usize },
    #[error("line {line}: the CSV cannot be read: {what}")]
    Syntax { line: usize, what: String },
    #[error("the header row has {what}")]
    Header { what: String },
    #[error("observable {name} has no column in the data file (columns: {columns})")]
    MissingColumn { name: String, columns: String },
    #[error("the data file has {rows} rows of data; at least {needed} are needed")]
    TooFewRows { rows: usize, needed: usize },
    #[error("{} bad cell(s)", count)]
    Cells {
        count: usize,
        /// The first [`MAX_REPORTED_CELLS`] problems, in file order.
        problems: Vec<CellProblem>,
    },
    #[error("series {name} has no observed value at all")]
    AllMissing { name: String },
}

/// A data set for a model's observables.
#[derive(Debug, Clone, PartialEq)]
pub struct DataSet {
    /// Period labels, file order.
    pub periods: Vec<String>,
    /// The observables' names, in the order asked for.
    pub names: Vec<String>,
    /// N x p, NaN where missing.
    pub values: DMatrix<f64>,
    /// Notes for the person (ignored columns).
    pub notes: Vec<String>,
}

/// Whether a trimmed cell means "missing": empty, `NA` or `NaN` in any case.
pub fn is_missing(cell: &str) -> bool {
    cell.is_empty() || cell.eq_ignore_ascii_case("na") || cell.eq_ignore_ascii_case("nan")
}

/// Parses `bytes` as a data file for the observables `names` (read only). Returns the data set,
/// or every problem found ([`DataError`]). Needs at least `min_rows` rows of data.
pub fn read_data(bytes: &[u8], names: &[String], min_rows: usize) -> Result<DataSet, DataError> {
    if bytes.len() > MAX_DATA_BYTES {
        return Err(DataError::TooLarge);
    }
    let text = match std::str::from_utf8(bytes) {
        Ok(t) => t,
        Err(e) => {
            let line = 1 + bytes[..e.valid_up_to()]
                .iter()
                .filter(|&&b| b == b'\n')
                .count();
            return Err(DataError::NotUtf8 { line });
        }
    };
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    if text.trim().is_empty() {
        return Err(DataError::Empty);
    }
    let mut reader = csv::ReaderBuilder::new()
        .has_headers(false)
        .flexible(true)
        .from_reader(text.as_bytes());
    let mut records = Vec::new();
    for rec in reader.records() {
        match rec {
            Ok(r) => {
                let line = r.position().map_or(0, |p| p.line() as usize);
                records.push((line, r));
            }
            Err(e) => {
                let line = e.position().map_or(0, |p| p.line() as usize);
                let what = match e.kind() {
                    csv::ErrorKind::Utf8 { .. } => "a field is not valid UTF-8".to_string(),
                    _ => e.to_string(),
                };
                return Err(DataError::Syntax { line, what });
            }
        }
    }
    // Skip lines that are entirely blank (one empty field).
    records.retain(|(_, r)| !(r.len() == 1 && r.get(0).is_some_and(|f| f.trim().is_empty())));
    let Some((_, header)) = records.first() else {
        return Err(DataError::Empty);
    };
    let header: Vec<String> = header.iter().map(|h| h.trim().to_string()).collect();
    if header.len() < 2 {
        return Err(DataError::Header {
            what: "no series (it needs the period column and at least one series column)".into(),
        });
    }
    let mut problems = Vec::new();
    for (i, h) in header.iter().enumerate().skip(1) {
        if h.is_empty() {
            problems.push(CellProblem {
                line: records[0].0,
                column: i + 1,
                header: String::new(),
                what: "empty column name".into(),
            });
        } else if header[1..i].contains(h) {
            problems.push(CellProblem {
                line: records[0].0,
                column: i + 1,
                header: h.clone(),
                what: format!("column name {h} appears twice"),
            });
        }
    }
    let mut columns = Vec::with_capacity(names.len());
    for name in names {
        match header.iter().skip(1).position(|h| h == name) {
            Some(c) => columns.push(c + 1),
            None => {
                return Err(DataError::MissingColumn {
                    name: name.clone(),
                    columns: header[1..].join(", "),
                })
            }
        }
    }
    let mut notes = Vec::new();
    let ignored: Vec<&str> = header[1..]
        .iter()
        .filter(|h| !h.is_empty() && !names.contains(h))
        .map(|h| h.as_str())
        .collect();
    if !ignored.is_empty() {
        notes.push(format!(
            "column{} {} {} not an observable of the model and {} ignored",
            if ignored.len() == 1 { "" } else { "s" },
            ignored.join(", "),
            if ignored.len() == 1 { "is" } else { "are" },
            if ignored.len() == 1 { "is" } else { "are" },
        ));
    }
    let rows = &records[1..];
    let mut periods = Vec::with_capacity(rows.len());
    let mut values = DMatrix::from_element(rows.len(), names.len(), f64::NAN);
    for (t, (line, rec)) in rows.iter().enumerate() {
        if rec.len() != header.len() {
            problems.push(CellProblem {
                line: *line,
                column: rec.len().min(header.len()) + 1,
                header: String::new(),
                what: format!(
                    "the row has {} fields but the header has {}",
                    rec.len(),
                    header.len()
                ),
            });
        }
        let label = rec.get(0).unwrap_or("").trim().to_string();
        if label.is_empty() {
            problems.push(CellProblem {
                line: *line,
                column: 1,
                header: header[0].clone(),
                what: "empty period label".into(),
            });
        }
        periods.push(label);
        for (j, &c) in columns.iter().enumerate() {
            let cell = rec.get(c).unwrap_or("").trim();
            if is_missing(cell) {
                continue;
            }
            match cell.parse::<f64>() {
                Ok(v) if v.is_finite() => values[(t, j)] = v,
                Ok(_) => problems.push(CellProblem {
                    line: *line,
                    column: c + 1,
                    header: header[c].clone(),
                    what: format!("{cell:?} is not a finite number"),
                }),
                Err(_) => problems.push(CellProblem {
                    line: *line,
                    column: c + 1,
                    header: header[c].clone(),
                    what: format!("{cell:?} is not a number (a missing value is empty, NA or NaN)"),
                }),
            }
        }
    }
    if !problems.is_empty() {
        let count = problems.len();
        problems.truncate(MAX_REPORTED_CELLS);
        return Err(DataError::Cells { count, problems });
    }
    if rows.len() < min_rows.max(1) {
        return Err(DataError::TooFewRows {
            rows: rows.len(),
            needed: min_rows.max(1),
        });
    }
    for (j, name) in names.iter().enumerate() {
        if values.column(j).iter().all(|v| v.is_nan()) {
            return Err(DataError::AllMissing { name: name.clone() });
        }
    }
    Ok(DataSet {
        periods,
        names: names.to_vec(),
        values,
        notes,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn names(v: &[&str]) -> Vec<String> {
        v.iter().map(|s| s.to_string()).collect()
    }

    #[test]
    fn reads_labels_values_and_missing() {
        let src = "period,b,a,extra\n2031Q1,1.5,2,x\n2031Q2,,NA,y\n2031Q3,nan,-3e-1,z\n";
        let d = read_data(src.as_bytes(), &names(&["a", "b"]), 1).unwrap();
        assert_eq!(d.periods, vec!["2031Q1", "2031Q2", "2031Q3"]);
        assert_eq!(d.values[(0, 0)], 2.0);
        assert_eq!(d.values[(0, 1)], 1.5);
        assert!(d.values[(1, 0)].is_nan() && d.values[(1, 1)].is_nan());
        assert!(d.values[(2, 1)].is_nan());
        assert_eq!(d.values[(2, 0)], -0.3);
        assert_eq!(d.notes.len(), 1);
        assert!(d.notes[0].contains("extra"));
    }

    #[test]
    fn every_bad_cell_is_reported_with_line_and_column() {
        let src = "period,a,b\n1,1,x\n2,oops,2\n3,inf,3\n";
        match read_data(src.as_bytes(), &names(&["a", "b"]), 1) {
            Err(DataError::Cells { count, problems }) => {
                assert_eq!(count, 3);
                let at: Vec<(usize, usize)> = problems.iter().map(|p| (p.line, p.column)).collect();
                assert_eq!(at, vec![(2, 3), (3, 2), (4, 2)]);
                assert_eq!(problems[0].header, "b");
            }
            other => panic!("{other:?}"),
        }
    }

    #[test]
    fn structural_problems() {
        let n = names(&["a"]);
        assert_eq!(read_data(b"", &n, 1), Err(DataError::Empty));
        assert!(matches!(
            read_data(b"period,b\n1,2\n", &n, 1),
            Err(DataError::MissingColumn { .. })
        ));
        assert!(matches!(
            read_data(b"period,a\n1,2\n", &n, 3),
            Err(DataError::TooFewRows { rows: 1, needed: 3 })
        ));
        assert!(matches!(
            read_data(b"period,a\n1,NA\n2,\n", &n, 1),
            Err(DataError::AllMissing { .. })
        ));
        assert!(matches!(
            read_data(b"period,a\n1,2,3\n", &n, 1),
            Err(DataError::Cells { .. })
        ));
        assert!(matches!(
            read_data(&[b'p', b',', b'a', b'\n', b'1', b',', 0xff, b'\n'], &n, 1),
            Err(DataError::NotUtf8 { line: 2 })
        ));
    }
}
