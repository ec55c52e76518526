//! Raw command-line arguments (clap derive), exactly the surface of `../shared/spec/cli.md`.
//! Nothing here does work: [`super::config`] validates these into typed settings first.

use std::path::PathBuf;

use clap::{Args, Parser, Subcommand, ValueEnum};

#[derive(Debug, Parser)]
#[command(
    name = "saddle",
    version,
    about = "Linear rational-expectations models: check, solve, impulse responses, moments",
    long_about = "saddle reads a model written in its own small language, finds its steady state, \
linearizes it with exact derivatives, solves it with a generalized Schur (QZ) decomposition and \
reports whether a unique stable solution exists, and why not if it does not.\n\n\
Results are conditional on the model and its calibration.",
    after_help = "Example:\n  saddle irf models/harbour.saddle --shock e_rate --horizon 12"
)]
pub struct Cli {
    #[command(subcommand)]
    pub command: Command,
}

#[derive(Debug, Subcommand)]
pub enum Command {
    /// Parse and validate a model; print a summary.
    #[command(after_help = "Example:\n  saddle check models/harbour.saddle --format json")]
    Check(CheckArgs),
    /// Steady state, linearization, QZ, counting and rank conditions, solution matrices.
    #[command(after_help = "Example:\n  saddle solve models/harbour.saddle --set phi_pi=0.9")]
    Solve(SolveArgs),
    /// Impulse responses to each innovation.
    #[command(
        after_help = "Example:\n  saddle irf models/harbour.saddle --shock e_rate --format csv"
    )]
    Irf(IrfArgs),
    /// Standard deviations, correlations, autocorrelations, variance decompositions.
    #[command(after_help = "Example:\n  saddle moments models/harbour.saddle --horizons 1,4,8,40")]
    Moments(MomentsArgs),
    /// Simulated paths from seeded random innovations.
    #[command(
        after_help = "Example:\n  saddle simulate models/harbour.saddle --seed 7 --periods 200 --format csv"
    )]
    Simulate(SimulateArgs),
    /// One self-contained HTML page with the summary, solution, plots and moments.
    #[command(after_help = "Example:\n  saddle report models/harbour.saddle -o harbour.html")]
    Report(ReportArgs),
    /// Solution status over a grid of parameter values.
    #[command(
        after_help = "Example:\n  saddle sweep models/harbour.saddle --vary phi_pi=0:3:61 --vary phi_y=0:1:41 --plot map.svg"
    )]
    Sweep(SweepArgs),
    /// The regimes side by side: expected loss, optimal rules, roots; tuned simple rules.
    #[command(
        after_help = "Example:\n  saddle optimize models/harbour_policy.saddle --tune phi_pi=1.01:4"
    )]
    Optimize(OptimizeArgs),
    /// Kalman filter and smoother of the model's observables on a data file; the likelihood.
    #[command(
        after_help = "Example:\n  saddle filter models/island_data.saddle --data data/island_data.csv --plot fit.svg"
    )]
    Filter(DataCommandArgs),
    /// Historical decomposition of the smoothed variables by innovation and initial state.
    #[command(
        after_help = "Example:\n  saddle decompose models/island_data.saddle --data data/island_data.csv --format csv"
    )]
    Decompose(DataCommandArgs),
    /// Forecasts past the data, optionally given a future path of observables (`--fix`).
    #[command(
        after_help = "Example:\n  saddle forecast models/island_data.saddle --data data/island_data.csv --horizon 8 --fix rate_obs=1.5,1.5"
    )]
    Forecast(ForecastArgs),
    /// Posterior mode (or maximum likelihood) and Metropolis-Hastings chains for data.
    #[command(
        after_help = "Example:\n  saddle estimate models/island_estimate.saddle --data models/island_estimate.csv --chains 4 --draws 5000 --draws-out draws.csv"
    )]
    Estimate(EstimateArgs),
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum CheckFormat {
    Text,
    Json,
    /// The model printed back in canonical form.
    Canonical,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum Format {
    Text,
    Json,
    Csv,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum ImpulseSize {
    /// One standard deviation of the innovation, with the co-movement of correlated innovations.
    OneSd,
    /// One standard deviation of the innovation alone (correlated innovations held at zero).
    OneSdAlone,
    /// A unit impulse.
    Unit,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum Layout {
    /// One row per (period, variable).
    Tidy,
    /// One row per period, one column per variable.
    Wide,
}

#[derive(Debug, Args)]
pub struct OutputArgs {
    /// Write the output to PATH instead of stdout (atomically: never left half-written).
    #[arg(short = 'o', long = "output", value_name = "PATH")]
    pub output: Option<PathBuf>,
}

/// Options shared by every command that solves the model.
#[derive(Debug, Args)]
pub struct SolveOptionArgs {
    /// Override a parameter's value (repeatable); derived parameters are recomputed.
    #[arg(long = "set", value_name = "NAME=VALUE")]
    pub set: Vec<String>,
    /// Discount factor B: the stable-root threshold becomes 1/sqrt(B).
    #[arg(long, value_name = "B", conflicts_with = "threshold")]
    pub discount: Option<f64>,
    /// Stable-root threshold X (overrides the file's options).
    #[arg(long, value_name = "X")]
    pub threshold: Option<f64>,
    /// Count roots on the boundary of the threshold as unstable (default: stable).
    #[arg(long)]
    pub boundary_unstable: bool,
    /// Print the time of each phase to stderr.
    #[arg(long)]
    pub timings: bool,
    /// Policy regime: the model as written (rule), or the optimal policy of its objective
    /// (commitment: timeless perspective; discretion: Markov-perfect).
    #[arg(long, value_enum, default_value_t = RegimeArg::Rule)]
    pub regime: RegimeArg,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum RegimeArg {
    Rule,
    Commitment,
    Discretion,
}

#[derive(Debug, Args)]
pub struct OptimizeArgs {
    /// Model file (.saddle), or `-` to read the model from standard input.
    #[arg(value_name = "FILE")]
    pub file: PathBuf,
    #[command(flatten)]
    pub solve: SolveOptionArgs,
    /// Search the simple rule's parameter NAME in [LO, HI] for the least expected loss
    /// (repeatable).
    #[arg(long, value_name = "NAME=LO:HI")]
    pub tune: Vec<String>,
    #[arg(long, value_enum, default_value_t = Format::Text)]
    pub format: Format,
    #[command(flatten)]
    pub out: OutputArgs,
}

#[derive(Debug, Args)]
pub struct CheckArgs {
    /// Model file (.saddle), or `-` to read the model from standard input.
    #[arg(value_name = "FILE")]
    pub file: PathBuf,
    #[arg(long, value_enum, default_value_t = CheckFormat::Text)]
    pub format: CheckFormat,
    #[command(flatten)]
    pub out: OutputArgs,
}

#[derive(Debug, Args)]
pub struct SolveArgs {
    /// Model file (.saddle), or `-` to read the model from standard input.
    #[arg(value_name = "FILE")]
    pub file: PathBuf,
    #[command(flatten)]
    pub solve: SolveOptionArgs,
    #[arg(long, value_enum, default_value_t = Format::Text)]
    pub format: Format,
    #[command(flatten)]
    pub out: OutputArgs,
}

#[derive(Debug, Args)]
pub struct IrfArgs {
    /// Model file (.saddle), or `-` to read the model from standard input.
    #[arg(value_name = "FILE")]
    pub file: PathBuf,
    #[command(flatten)]
    pub solve: SolveOptionArgs,
    /// Only these variables (comma-separated or repeated), in the order given.
    #[arg(long, value_name = "NAME,...", value_delimiter = ',')]
    pub vars: Vec<String>,
    /// Innovation to shock (repeatable; default: every innovation).
    #[arg(long, value_name = "NAME")]
    pub shock: Vec<String>,
    #[arg(long, value_enum, default_value_t = ImpulseSize::OneSd)]
    pub size: ImpulseSize,
    /// Periods after the impulse (default 40, or the file's options).
    #[arg(long, value_name = "H")]
    pub horizon: Option<u32>,
    /// Also draw the responses as an SVG grid of panels.
    #[arg(long, value_name = "PATH.svg")]
    pub plot: Option<PathBuf>,
    #[command(flatten)]
    pub bands: super::bands::BandArgs,
    #[arg(long, value_enum, default_value_t = Format::Text)]
    pub format: Format,
    #[command(flatten)]
    pub out: OutputArgs,
}

#[derive(Debug, Args)]
pub struct MomentsArgs {
    /// Model file (.saddle), or `-` to read the model from standard input.
    #[arg(value_name = "FILE")]
    pub file: PathBuf,
    #[command(flatten)]
    pub solve: SolveOptionArgs,
    /// Only these variables (comma-separated or repeated), in the order given.
    #[arg(long, value_name = "NAME,...", value_delimiter = ',')]
    pub vars: Vec<String>,
    /// Autocorrelations up to this lag.
    #[arg(long, value_name = "N", default_value_t = 5)]
    pub lags: u32,
    /// Forecast-error variance decomposition at these horizons (comma-separated).
    #[arg(long, value_name = "H,H,...", value_delimiter = ',')]
    pub horizons: Vec<u32>,
    #[command(flatten)]
    pub bands: super::bands::BandArgs,
    #[arg(long, value_enum, default_value_t = Format::Text)]
    pub format: Format,
    #[command(flatten)]
    pub out: OutputArgs,
}

#[derive(Debug, Args)]
pub struct SimulateArgs {
    /// Model file (.saddle), or `-` to read the model from standard input.
    #[arg(value_name = "FILE")]
    pub file: PathBuf,
    #[command(flatten)]
    pub solve: SolveOptionArgs,
    /// Only these variables (comma-separated or repeated), in the order given.
    #[arg(long, value_name = "NAME,...", value_delimiter = ',')]
    pub vars: Vec<String>,
    /// Seed of the random generator (same seed, same paths, on every platform).
    #[arg(long, value_name = "N", default_value_t = 1)]
    pub seed: u64,
    /// Periods kept after the burn-in.
    #[arg(long, value_name = "N", default_value_t = 200)]
    pub periods: u64,
    /// Periods simulated and dropped before those kept.
    #[arg(long = "burn-in", value_name = "N", default_value_t = 100)]
    pub burn_in: u64,
    /// Report levels (steady state added back) instead of deviations.
    #[arg(long)]
    pub levels: bool,
    #[arg(long, value_enum, default_value_t = Layout::Wide)]
    pub layout: Layout,
    /// Also draw the simulated paths as an SVG grid of panels.
    #[arg(long, value_name = "PATH.svg")]
    pub plot: Option<PathBuf>,
    #[arg(long, value_enum, default_value_t = Format::Text)]
    pub format: Format,
    #[command(flatten)]
    pub out: OutputArgs,
}

#[derive(Debug, Args)]
pub struct ReportArgs {
    /// Model file (.saddle), or `-` to read the model from standard input.
    #[arg(value_name = "FILE")]
    pub file: PathBuf,
    #[command(flatten)]
    pub solve: SolveOptionArgs,
    /// Impulse-response horizon in the report.
    #[arg(long, value_name = "H")]
    pub horizon: Option<u32>,
    /// Where to write the HTML page.
    #[arg(short = 'o', long = "output", value_name = "PATH.html")]
    pub output: PathBuf,
    /// A data file for the model's observables: adds a data section (filter, decomposition,
    /// forecasts).
    #[arg(long, value_name = "PATH.csv")]
    pub data: Option<PathBuf>,
    // Posterior draws: adds an estimation section (draws summary, impulse-response bands).
    #[command(flatten)]
    pub bands: super::bands::BandArgs,
}

#[derive(Debug, Args)]
pub struct SweepArgs {
    /// Model file (.saddle), or `-` to read the model from standard input.
    #[arg(value_name = "FILE")]
    pub file: PathBuf,
    #[command(flatten)]
    pub solve: SolveOptionArgs,
    /// Parameter and grid: NAME=LO:HI:N (N evenly spaced values, inclusive); once or twice.
    #[arg(long, value_name = "NAME=LO:HI:N", required = true)]
    pub vary: Vec<String>,
    /// Draw the grid coloured by status (SVG); shaded by expected loss with `--measure loss`.
    #[arg(long, value_name = "PATH.svg")]
    pub plot: Option<PathBuf>,
    /// What each point reports: the solution status, or also the expected loss of the
    /// objective (`loss`; the model needs an `objective` section).
    #[arg(long, value_enum, default_value_t = Measure::Status)]
    pub measure: Measure,
    #[arg(long, value_enum, default_value_t = Format::Text)]
    pub format: Format,
    #[command(flatten)]
    pub out: OutputArgs,
}

/// What `sweep` measures at each grid point.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum Measure {
    /// Status, counts and the largest stable modulus.
    Status,
    /// Also the expected loss (unconditional mean of the period loss).
    Loss,
}

/// Options of the data commands `filter` and `decompose` (cli.md "Data commands").
#[derive(Debug, Args)]
pub struct DataCommandArgs {
    /// Model file (.saddle), or `-` to read the model from standard input.
    #[arg(value_name = "FILE")]
    pub file: PathBuf,
    #[command(flatten)]
    pub solve: SolveOptionArgs,
    /// The data file (CSV: a header row, period labels in the first column, one column per
    /// observable).
    #[arg(long, value_name = "PATH.csv", required = true)]
    pub data: PathBuf,
    /// Also draw the result as an SVG chart.
    #[arg(long, value_name = "PATH.svg")]
    pub plot: Option<PathBuf>,
    // Posterior bands (`filter` and `forecast`; `decompose` refuses them).
    #[command(flatten)]
    pub bands: super::bands::BandArgs,
    #[arg(long, value_enum, default_value_t = Format::Text)]
    pub format: Format,
    #[command(flatten)]
    pub out: OutputArgs,
}

/// Options of `saddle estimate` (cli.md "Data commands").
#[derive(Debug, Args)]
pub struct EstimateArgs {
    /// Model file (.saddle), or `-` to read the model from standard input.
    #[arg(value_name = "FILE")]
    pub file: PathBuf,
    #[command(flatten)]
    pub solve: SolveOptionArgs,
    /// The data: CSV with a period column and one column per observable.
    #[arg(long, value_name = "PATH.csv")]
    pub data: PathBuf,
    /// Metropolis-Hastings chains, run in parallel.
    #[arg(long, value_name = "N", default_value_t = 4)]
    pub chains: usize,
    /// Kept draws per chain (0: the mode only).
    #[arg(long, value_name = "N", default_value_t = 2000)]
    pub draws: usize,
    /// Draws per chain dropped first, during which the proposal adapts.
    #[arg(long = "burn-in", value_name = "N", default_value_t = 1000)]
    pub burn_in: usize,
    /// Seed of the chains' random streams (same seed and chain count, same draws, on any
    /// number of threads).
    #[arg(long, value_name = "S", default_value_t = 1)]
    pub seed: u64,
    /// Starting points of the mode search (the calibration, the prior means, then points half
    /// a prior sd to either side).
    #[arg(long, value_name = "N", default_value_t = 4)]
    pub starts: usize,
    /// Factor on the proposal's step (smaller when a chain never moves).
    #[arg(long, value_name = "X", default_value_t = 1.0)]
    pub step: f64,
    /// Also draw the chains' traces as an SVG grid of panels.
    #[arg(long, value_name = "PATH.svg")]
    pub plot: Option<PathBuf>,
    /// Write the kept draws as CSV while the chains run (seed,chain,draw,quantities...,logpost).
    #[arg(long = "draws-out", value_name = "PATH.csv")]
    pub draws_out: Option<PathBuf>,
    /// Run no chains: diagnose the draws in these files instead (files of `--draws-out` from
    /// runs with other seeds or machines; chains are told apart by seed and chain number).
    #[arg(long, value_name = "PATH.csv", num_args = 1.., conflicts_with = "draws_out")]
    pub diagnose: Vec<PathBuf>,
    #[arg(long, value_enum, default_value_t = Format::Text)]
    pub format: Format,
    #[command(flatten)]
    pub out: OutputArgs,
}

/// Options of `saddle forecast`.
#[derive(Debug, Args)]
pub struct ForecastArgs {
    #[command(flatten)]
    pub common: DataCommandArgs,
    /// Periods past the data (default 12).
    #[arg(long, value_name = "H")]
    pub horizon: Option<u32>,
    /// Condition on future values of an observable, in data units, for the first periods of
    /// the horizon (repeatable): OBS=v1,v2,...
    #[arg(long, value_name = "OBS=v1,v2,...")]
    pub fix: Vec<String>,
}
