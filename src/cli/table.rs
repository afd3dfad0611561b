//! `rxnet table`: the stoichiometric table of the feed in extents of reaction.

use super::Format;
use super::input::load;
use super::output::{emit, json};
use rxnet::{Override, analysis, report};

/// `rxnet table FILE`.
pub fn table(file: &std::path::Path, format: Format, set: &[Override]) -> i32 {
    let net = match load(file, set) {
        Ok(n) => n,
        Err(code) => return code,
    };
    let t = analysis::table::build(&net);
    let text = match format {
        Format::Text => report::table_text(&t),
        Format::Json => json(&t),
    };
    emit(&text, 0)
}
