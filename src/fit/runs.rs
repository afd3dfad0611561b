//! The runs table: per-run conditions as `--set` overrides.
//!
//! ```text
//! run,feed.T,feed.concentrations.A
//! r1,300 K,1.0 mol/L
//! r2,320 K,1.0 mol/L
//! ```
//!
//! Headers are `--set` paths; each cell is one override for its run (an empty cell keeps the
//! study's value). When a table is given, every run of the data must be in it.

use super::data::{DataError, content_lines, split_line};
use crate::model::Override;

/// One run's overrides, with where they were written (for messages).
#[derive(Debug, Clone, PartialEq)]
pub struct RunRow {
    pub run: String,
    pub line: usize,
    /// (override, 1-based column).
    pub sets: Vec<(Override, usize)>,
}

/// A runs table, parsed.
#[derive(Debug, Clone, PartialEq)]
pub struct RunsTable {
    pub file: String,
    pub rows: Vec<RunRow>,
}

impl RunsTable {
    /// Parse a runs table (`file` names it in messages).
    pub fn parse(text: &str, file: &str) -> Result<RunsTable, DataError> {
        let err = |line: usize, column: usize, message: String| {
            DataError::at(file, line, column, message)
        };
        let mut lines = content_lines(text);
        let Some((hl, header)) = lines.next() else {
            return Err(err(
                0,
                0,
                "no header: expected `run` and --set paths, e.g. `run,feed.T`".into(),
            ));
        };
        let head = split_line(header).map_err(|(c, m)| err(hl, c, m))?;
        if !head[0].text.eq_ignore_ascii_case("run") {
            return Err(err(
                hl,
                head[0].column,
                format!("the first column must be `run`, got `{}`", head[0].text),
            ));
        }
        if head.len() < 2 {
            return Err(err(
                hl,
                0,
                "the header names no --set path after `run` (e.g. `run,feed.T`)".into(),
            ));
        }
        for (k, c) in head.iter().enumerate().skip(1) {
            if c.text.is_empty() || c.text.split('.').any(|s| s.is_empty()) {
                return Err(err(
                    hl,
                    c.column,
                    format!(
                        "`{}` is not a --set path such as feed.T or reactions.r1.rate.k",
                        c.text
                    ),
                ));
            }
            if head[1..k].iter().any(|p| p.text == c.text) {
                return Err(err(hl, c.column, format!("`{}` is given twice", c.text)));
            }
        }
        let mut rows: Vec<RunRow> = Vec::new();
        for (line, text) in lines {
            let cells = split_line(text).map_err(|(c, m)| err(line, c, m))?;
            if cells.len() != head.len() {
                return Err(err(
                    line,
                    0,
                    format!("{} cells, the header has {}", cells.len(), head.len()),
                ));
            }
            let run = cells[0].text.clone();
            if run.is_empty() {
                return Err(err(line, cells[0].column, "the run id is empty".into()));
            }
            if let Some(prev) = rows.iter().find(|r| r.run == run) {
                return Err(err(
                    line,
                    cells[0].column,
                    format!("run `{run}` is already given on line {}", prev.line),
                ));
            }
            let sets = head[1..]
                .iter()
                .zip(&cells[1..])
                .filter(|(_, c)| !c.text.is_empty())
                .map(|(h, c)| {
                    (
                        Override {
                            path: h.text.clone(),
                            value: c.text.clone(),
                        },
                        c.column,
                    )
                })
                .collect();
            rows.push(RunRow { run, line, sets });
        }
        if rows.is_empty() {
            return Err(err(hl, 0, "the header is followed by no runs".into()));
        }
        Ok(RunsTable {
            file: file.to_string(),
            rows,
        })
    }

    pub fn row(&self, run: &str) -> Option<&RunRow> {
        self.rows.iter().find(|r| r.run == run)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_runs_table_reads_and_refuses_repeats() {
        let t = RunsTable::parse(
            "run,feed.T,reactor.time\nr1,300 K,\nr2,320 K,2 h\n",
            "r.csv",
        )
        .unwrap();
        assert_eq!(t.rows.len(), 2);
        assert_eq!(t.rows[0].sets.len(), 1);
        assert_eq!(t.rows[1].sets[1].0.value, "2 h");
        assert_eq!(t.rows[1].sets[1].1, 10);
        let e = RunsTable::parse("run,feed.T\nr1,300 K\nr1,310 K\n", "r.csv").unwrap_err();
        assert_eq!((e.line, e.column), (3, 1));
        let e = RunsTable::parse("run,feed..T\nr1,300 K\n", "r.csv").unwrap_err();
        assert_eq!((e.line, e.column), (1, 5));
    }
}
