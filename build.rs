//! Generates the parser from `grammar/saddle.lalrpop` (kept outside `src/` on purpose: the grammar
//! is a contract document of its own, next to the spec).
fn main() {
    lalrpop::Configuration::new()
        .set_in_dir("grammar")
        .emit_rerun_directives(true)
        .process()
        .unwrap_or_else(|e| panic!("lalrpop failed on grammar/: {e}"));
}
