//! `saddle solve` (not built yet: this runner is replaced by the issue that builds the command).

use super::args::SolveArgs;
use super::{Failure, Outcome};

pub fn run(_args: SolveArgs) -> Result<Outcome, Failure> {
    Err(Failure::new(
        Outcome::NumericalFailure,
        "`saddle solve` is not built yet",
    ))
}
