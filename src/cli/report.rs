//! `saddle report` (not built yet: this runner is replaced by the issue that builds the command).

use super::args::ReportArgs;
use super::{Failure, Outcome};

pub fn run(_args: ReportArgs) -> Result<Outcome, Failure> {
    Err(Failure::new(
        Outcome::NumericalFailure,
        "`saddle report` is not built yet",
    ))
}
