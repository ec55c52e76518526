//! `saddle moments` (not built yet: this runner is replaced by the issue that builds the command).

use super::args::MomentsArgs;
use super::{Failure, Outcome};

pub fn run(_args: MomentsArgs) -> Result<Outcome, Failure> {
    Err(Failure::new(
        Outcome::NumericalFailure,
        "`saddle moments` is not built yet",
    ))
}
