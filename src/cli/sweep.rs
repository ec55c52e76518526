//! `saddle sweep` (not built yet: this runner is replaced by the issue that builds the command).

use super::args::SweepArgs;
use super::{Failure, Outcome};

pub fn run(_args: SweepArgs) -> Result<Outcome, Failure> {
    Err(Failure::new(
        Outcome::NumericalFailure,
        "`saddle sweep` is not built yet",
    ))
}
