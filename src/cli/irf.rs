//! `saddle irf` (not built yet: this runner is replaced by the issue that builds the command).

use super::args::IrfArgs;
use super::{Failure, Outcome};

pub fn run(_args: IrfArgs) -> Result<Outcome, Failure> {
    Err(Failure::new(
        Outcome::NumericalFailure,
        "`saddle irf` is not built yet",
    ))
}
