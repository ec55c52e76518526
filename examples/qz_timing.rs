//! QZ timing contract for ../shared/bench/compare_qz.py (under construction).
fn main() {}
