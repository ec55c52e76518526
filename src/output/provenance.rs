//! Where an output came from (cli.md, "Every output says where it came from"): the model file and
//! its SHA-256, the program version, the `--set` overrides exactly as given, every parameter's
//! value as used, the stability threshold and the policy regime, and, for the data commands, the
//! data file and its SHA-256 (and for outputs with posterior bands, the draws files and theirs).
//!
//! JSON outputs carry it as `"provenance"`; text outputs end with [`Provenance::text_line`]; a
//! CSV written to a file gets it beside the file (`out.csv.json`); pictures put the text line in a
//! footer.

use sha2::{Digest, Sha256};

use crate::model::Model;

/// The record of one run.
#[derive(Debug, Clone, PartialEq)]
pub struct Provenance {
    /// The model file as the user named it.
    pub file: String,
    /// SHA-256 of the model file's bytes, lowercase hexadecimal.
    pub sha256: String,
    pub version: &'static str,
    /// The `--set` values, in the order given.
    pub overrides: Vec<(String, f64)>,
    /// Every parameter's value as used (file order).
    pub parameters: Vec<(String, f64)>,
    /// The stable-root threshold used (`None` before a solve, or for `optimize`, whose regimes
    /// use their own).
    pub threshold: Option<f64>,
    /// `rule`, `commitment` or `discretion`.
    pub regime: String,
    /// The data file and its SHA-256, for the data commands.
    pub data: Option<(String, String)>,
    /// The posterior draws files and their SHA-256, for outputs with bands (`--draws`).
    pub draws: Vec<(String, String)>,
}

/// SHA-256 of `bytes` in lowercase hexadecimal.
pub fn sha256_hex(bytes: &[u8]) -> String {
    let digest = Sha256::digest(bytes);
    digest.iter().map(|b| format!("{b:02x}")).collect()
}

impl Provenance {
    /// The record for `model` (already recalibrated with `overrides`) read from `file` whose text
    /// is `source`.
    pub fn new(
        file: &str,
        source: &[u8],
        model: &Model,
        overrides: &[(String, f64)],
        threshold: Option<f64>,
        regime: &str,
    ) -> Provenance {
        Provenance {
            file: file.to_string(),
            sha256: sha256_hex(source),
            version: env!("CARGO_PKG_VERSION"),
            overrides: overrides.to_vec(),
            parameters: model
                .parameters
                .iter()
                .map(|p| (p.name.clone(), p.value))
                .collect(),
            threshold,
            regime: regime.to_string(),
            data: None,
            draws: Vec::new(),
        }
    }

    /// The same record with a data file.
    pub fn with_data(mut self, file: &str, bytes: &[u8]) -> Provenance {
        self.data = Some((file.to_string(), sha256_hex(bytes)));
        self
    }

    /// The JSON object of cli.md (`file`, `sha256`, `version`, `overrides`, `parameters`,
    /// `threshold`, `regime`, and `data`/`data_sha256` when there is a data file). Non-finite
    /// numbers become `null`.
    pub fn json(&self) -> serde_json::Value {
        let num = |x: f64| {
            serde_json::Number::from_f64(x)
                .map(serde_json::Value::Number)
                .unwrap_or(serde_json::Value::Null)
        };
        let map = |v: &[(String, f64)]| {
            serde_json::Value::Object(v.iter().map(|(k, x)| (k.clone(), num(*x))).collect())
        };
        let mut o = serde_json::Map::new();
        o.insert("file".into(), self.file.clone().into());
        o.insert("sha256".into(), self.sha256.clone().into());
        o.insert("version".into(), self.version.into());
        o.insert("overrides".into(), map(&self.overrides));
        o.insert("parameters".into(), map(&self.parameters));
        o.insert(
            "threshold".into(),
            self.threshold.map_or(serde_json::Value::Null, num),
        );
        o.insert("regime".into(), self.regime.clone().into());
        if let Some((file, sha)) = &self.data {
            o.insert("data_file".into(), file.clone().into());
            o.insert("data_sha256".into(), sha.clone().into());
        }
        if !self.draws.is_empty() {
            let d: Vec<serde_json::Value> = self
                .draws
                .iter()
                .map(|(f, sha)| serde_json::json!({"file": f, "sha256": sha}))
                .collect();
            o.insert("draws".into(), serde_json::Value::Array(d));
        }
        serde_json::Value::Object(o)
    }

    /// One line for a person: file, hash prefix, version, overrides, threshold, regime, data.
    pub fn text_line(&self) -> String {
        let mut s = format!(
            "Source: {} (sha256 {}), saddle {}",
            self.file,
            self.sha256.get(..12).unwrap_or(&self.sha256),
            self.version
        );
        if self.overrides.is_empty() {
            s.push_str("; no overrides");
        } else {
            let o: Vec<String> = self
                .overrides
                .iter()
                .map(|(k, v)| format!("{k}={v}"))
                .collect();
            s.push_str(&format!("; overrides {}", o.join(", ")));
        }
        if let Some(t) = self.threshold {
            s.push_str(&format!(
                "; threshold {}",
                crate::solution::threshold::show(t)
            ));
        }
        s.push_str(&format!("; regime {}", self.regime));
        if let Some((file, sha)) = &self.data {
            s.push_str(&format!(
                "; data {file} (sha256 {})",
                sha.get(..12).unwrap_or(sha)
            ));
        }
        for (file, sha) in &self.draws {
            s.push_str(&format!(
                "; draws {file} (sha256 {})",
                sha.get(..12).unwrap_or(sha)
            ));
        }
        s.push('.');
        s
    }

    /// [`Self::json`] as compact text.
    pub fn json_text(&self) -> String {
        self.json().to_string()
    }

    /// `json` (a JSON object as text) with `"provenance"` added at the end (replacing one already
    /// there); text that is not a JSON object is returned unchanged. Ends in a newline.
    pub fn add_to_json(&self, json: &str) -> String {
        match serde_json::from_str::<serde_json::Value>(json) {
            Ok(serde_json::Value::Object(mut o)) => {
                o.insert("provenance".into(), self.json());
                let mut out = serde_json::to_string_pretty(&serde_json::Value::Object(o))
                    .unwrap_or_else(|_| json.to_string());
                out.push('\n');
                out
            }
            _ => json.to_string(),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// SHA-256 of "abc" (FIPS 180-2, appendix B.1).
    #[test]
    fn sha256_of_abc_is_the_published_digest() {
        assert_eq!(
            sha256_hex(b"abc"),
            "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
        );
    }
}
