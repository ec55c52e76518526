//! `saddle check` (not built yet: this runner is replaced by the issue that builds the command).

use super::args::CheckArgs;
use super::{Failure, Outcome};

pub fn run(_args: CheckArgs) -> Result<Outcome, Failure> {
    Err(Failure::new(
        Outcome::NumericalFailure,
        "`saddle check` is not built yet",
    ))
}
