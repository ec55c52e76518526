//! `saddle simulate` (not built yet: this runner is replaced by the issue that builds the command).

use super::args::SimulateArgs;
use super::{Failure, Outcome};

pub fn run(_args: SimulateArgs) -> Result<Outcome, Failure> {
    Err(Failure::new(
        Outcome::NumericalFailure,
        "`saddle simulate` is not built yet",
    ))
}
