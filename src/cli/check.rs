//! `saddle check FILE`: parse and validate a model; print its summary (text or JSON) or the model
//! in canonical form. Exit 0 when the model checks, 1 when it does not (diagnostics on stderr).

use saddle::model::print::print_model;
use saddle::output::summary;

use super::args::{CheckArgs, CheckFormat};
use super::{load::load_model, output, Failure, Outcome};

pub fn run(args: CheckArgs) -> Result<Outcome, Failure> {
    let (model, _source) = load_model(&args.file)?;
    let text = match args.format {
        CheckFormat::Text => summary::text(&model),
        CheckFormat::Json => summary::json(&model),
        CheckFormat::Canonical => print_model(&model),
    };
    output::emit(args.out.output.as_deref(), text.as_bytes())?;
    Ok(Outcome::Success)
}
