//! `--draws PATH.csv` on `irf`, `moments`, `filter` and `forecast`: read the draws file of
//! `estimate --draws-out`, recompute the command's answer at (at most `--max-draws`, evenly
//! spaced) draws and report quantiles (library: [`saddle::estimation::bands`]; words and tables:
//! [`saddle::output::bands`]). A bad draws file is exit 1 with `PATH:line:column`, before any
//! output is written; draws without a unique stable solution are counted, never fatal; when no
//! draw can be computed the exit status is 4.

use std::io::Read;
use std::path::{Path, PathBuf};

use super::args::Format;
use super::config::SolveSettings;
use super::load::load_model;
use super::solve::{apply_overrides, options};
use super::{Failure, Outcome};
use saddle::estimation::bands::{posterior_bands, BandParams, Bands, DrawSet};
use saddle::estimation::draws::{read_draws, resolve, Draws, MAX_DRAWS_BYTES};
use saddle::model::{Model, PriorTarget};
use saddle::output::bands::{self as render, DrawsRecord, Element};
use saddle::output::provenance::sha256_hex;
use saddle::solution::SolvedModel;

/// The options of a command that accepts draws.
#[derive(Debug, clap::Args)]
pub struct BandArgs {
    /// Posterior draws (the file of `estimate --draws-out`; repeatable, files are merged):
    /// report 5, 50 and 95 percent quantiles over them.
    #[arg(long = "draws", value_name = "PATH.csv")]
    pub draws: Vec<PathBuf>,
    /// Most draws used, evenly spaced through the file(s).
    #[arg(long = "max-draws", value_name = "N", default_value_t = BandParams::default().max_draws)]
    pub max_draws: usize,
}

/// Draws read, checked against the model and ready.
pub struct LoadedDraws {
    pub base: Model,
    pub draws: Draws,
    pub targets: Vec<PriorTarget>,
    pub record: DrawsRecord,
    pub params: BandParams,
}

/// Reads one file, at most [`MAX_DRAWS_BYTES`] (+1, so that a larger one is seen as such).
pub fn read_bounded(path: &Path) -> Result<Vec<u8>, Failure> {
    let shown = path.display();
    let f = std::fs::File::open(path)
        .map_err(|e| Failure::usage(format!("cannot read draws file {shown}: {e}")))?;
    let mut bytes = Vec::new();
    f.take(MAX_DRAWS_BYTES as u64 + 1)
        .read_to_end(&mut bytes)
        .map_err(|e| Failure::usage(format!("cannot read draws file {shown}: {e}")))?;
    Ok(bytes)
}

/// Reads and merges the draws files, checks their columns against the model (`file` with the
/// settings' overrides, before any policy regime). `Ok(None)` without `--draws`.
pub fn load(
    args: &BandArgs,
    file: &Path,
    settings: &SolveSettings,
) -> Result<Option<LoadedDraws>, Failure> {
    if args.draws.is_empty() {
        return Ok(None);
    }
    if args.max_draws == 0 {
        return Err(Failure::usage("--max-draws must be at least 1"));
    }
    let bad = |p: &Path, e: String| {
        Failure::new(
            Outcome::ModelError,
            format!("draws file {}:{e}; nothing was written", p.display()),
        )
    };
    let mut merged: Option<Draws> = None;
    let mut files = Vec::new();
    for p in &args.draws {
        let bytes = read_bounded(p)?;
        let d = read_draws(&bytes).map_err(|e| bad(p, e.to_string()))?;
        files.push((p.display().to_string(), sha256_hex(&bytes)));
        match &mut merged {
            None => merged = Some(d),
            Some(m) => m.merge(d).map_err(|e| bad(p, format!(" {e}")))?,
        }
    }
    let Some(draws) = merged else {
        return Ok(None);
    };
    let (model, _) = load_model(file)?;
    let base = apply_overrides(model, &settings.overrides)?;
    let first = &args.draws[0];
    let targets =
        resolve(&base, &draws.names, draws.offset).map_err(|e| bad(first, e.to_string()))?;
    let record = DrawsRecord {
        files,
        chains: draws.chains().len(),
        max_draws: args.max_draws,
    };
    Ok(Some(LoadedDraws {
        base,
        draws,
        targets,
        record,
        params: BandParams {
            max_draws: args.max_draws,
            ..BandParams::default()
        },
    }))
}

/// The bands of the `point` elements: `g` computes the same elements' values at each draw.
pub fn compute<G>(
    d: &LoadedDraws,
    settings: &SolveSettings,
    point: &[Element],
    g: G,
) -> Result<Bands, Failure>
where
    G: Fn(&Model, &SolvedModel) -> Result<Vec<f64>, String> + Sync,
{
    posterior_bands(
        &d.base,
        DrawSet {
            targets: &d.targets,
            x: &d.draws.x,
        },
        &options(settings),
        settings.regime,
        &d.params,
        point.len(),
        g,
    )
    .map_err(|e| Failure::numerical(format!("posterior bands: {e}")))
}

/// The command's rendered output with the bands added: JSON gains `"bands"`, text a section
/// after it, CSV becomes the bands table (key columns, `value`, one column per quantile).
pub fn attach(
    text: String,
    format: Format,
    columns: &[&str],
    point: &[Element],
    b: &Bands,
    rec: &DrawsRecord,
) -> String {
    match format {
        Format::Json => render::add_to_json(&text, point, b, rec),
        Format::Csv => render::csv(columns, point, b),
        Format::Text => format!(
            "{}\n\n{}",
            text.trim_end(),
            render::text(columns, point, b, rec)
        ),
    }
}

/// The values of elements, in order.
pub fn values(e: &[Element]) -> Vec<f64> {
    e.iter().map(|e| e.value).collect()
}

/// Panels of the data elements (`period,kind,name`) of `kind`: one per name, in order, with the
/// calibration values and the bands over the periods; `subtitle` of each name.
pub fn data_panels(
    point: &[Element],
    b: &Bands,
    kind: &str,
    subtitle: &dyn Fn(&str) -> Option<String>,
) -> Vec<saddle::output::bands_plot::BandPanel> {
    let mut panels: Vec<saddle::output::bands_plot::BandPanel> = Vec::new();
    let mut current: Option<String> = None;
    for (e, v) in point.iter().zip(&b.values) {
        if e.keys.len() != 3 || e.keys[1] != kind {
            continue;
        }
        if current.as_deref() != Some(e.keys[2].as_str()) {
            current = Some(e.keys[2].clone());
            panels.push(saddle::output::bands_plot::BandPanel {
                title: e.keys[2].clone(),
                subtitle: subtitle(&e.keys[2]),
                point: Vec::new(),
                quantiles: vec![Vec::new(); b.quantiles.len()],
            });
        }
        if let Some(p) = panels.last_mut() {
            p.point.push(e.value);
            for (q, x) in p.quantiles.iter_mut().zip(v) {
                q.push(*x);
            }
        }
    }
    panels
}

/// The band chart of `panels` over `periods`, titled `title`, with the bands' summary and the
/// provenance line as notes.
pub fn chart(
    title: &str,
    periods: &[String],
    panels: &[saddle::output::bands_plot::BandPanel],
    b: &Bands,
    rec: &DrawsRecord,
    provenance_line: &str,
) -> String {
    let names: Vec<String> = b
        .quantiles
        .iter()
        .map(|&q| render::quantile_name(q))
        .collect();
    saddle::output::bands_plot::band_chart(
        title,
        periods,
        panels,
        &names,
        &[render::summary_line(b, rec), provenance_line.to_string()],
    )
}
