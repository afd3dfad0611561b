//! `rxnet check`: atom balances, independent reactions, equilibrium consistency, graph.

use super::Format;
use super::input::load;
use super::output::{EXIT_FINDINGS, emit, json};
use rxnet::{Override, analysis, report};

/// `rxnet check FILE`: exit 0 when no error finding, 1 with error findings, 2 invalid file.
pub fn check(file: &std::path::Path, format: Format, set: &[Override]) -> i32 {
    let net = match load(file, set) {
        Ok(n) => n,
        Err(code) => return code,
    };
    let c = analysis::check(&net);
    let text = match format {
        Format::Text => report::check_text(&c),
        Format::Json => json(&c),
    };
    emit(&text, if c.has_errors() { EXIT_FINDINGS } else { 0 })
}
