//! The measurements a fit is made to: a CSV file, one row per sample.
//!
//! ```text
//! # comment lines start with '#'
//! run,t [min],A [mol/L],B [mol/L],C [mol/L]
//! r1,0,1.000,0,0
//! r1,5,0.612,0.351,
//! ```
//!
//! Column 1 is the run's id, column 2 the independent variable (`t`, `V`, `W` or `tau`) with
//! its unit in brackets, the others a species and the unit of what is measured: a
//! concentration, an amount (batch) or a molar flow (flow reactors). An empty cell is a
//! missing value; rows repeating a (run, x) pair are replicates. Values stay in the file's
//! units (residuals are formed there); x is converted to SI. Every error names the file, the
//! line and the column.

use crate::model::Network;
use crate::units::{Dim, parse_unit};
use std::fmt;

/// A data or runs file that cannot be used: where and why.
#[derive(Debug, Clone, PartialEq)]
pub struct DataError {
    pub file: String,
    /// 1-based line, 0 for the whole file.
    pub line: usize,
    /// 1-based column (characters), 0 for the whole line.
    pub column: usize,
    pub message: String,
}

impl DataError {
    /// An error at `line` and `column` of `file` (0 for the whole file or the whole line).
    pub fn at(file: &str, line: usize, column: usize, message: String) -> DataError {
        DataError {
            file: file.to_string(),
            line,
            column,
            message,
        }
    }
}

impl fmt::Display for DataError {
    fn fmt(&self, f: &mut fmt::Formatter) -> fmt::Result {
        write!(f, "{}", self.file)?;
        if self.line > 0 {
            write!(f, ":{}", self.line)?;
            if self.column > 0 {
                write!(f, ":{}", self.column)?;
            }
        }
        write!(f, ": {}", self.message)
    }
}

impl std::error::Error for DataError {}

/// Largest data or runs file accepted, in bytes.
pub const MAX_DATA_BYTES: usize = 64 * 1024 * 1024;

/// What the second column measures along.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Independent {
    /// Batch time t.
    Time,
    /// Volume along a tube (or a CSTR's volume).
    Volume,
    /// Catalyst mass along a packed bed.
    CatalystMass,
    /// Residence time τ = V/v0 (tube: the point V = τ v0; CSTR: its own steady state).
    ResidenceTime,
}

impl Independent {
    /// The header name.
    pub fn name(self) -> &'static str {
        match self {
            Independent::Time => "t",
            Independent::Volume => "V",
            Independent::CatalystMass => "W",
            Independent::ResidenceTime => "tau",
        }
    }
    fn dim(self) -> Dim {
        match self {
            Independent::Time | Independent::ResidenceTime => Dim::TIME,
            Independent::Volume => Dim::LENGTH.powf(3.0),
            Independent::CatalystMass => Dim::MASS,
        }
    }
}

/// What a species column measures.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Measure {
    /// mol/m3 in SI: the state over the volume (batch) or the volumetric flow (flow).
    Concentration,
    /// mol: a batch's state itself.
    Amount,
    /// mol/s: a flow reactor's state itself.
    Flow,
}

impl Measure {
    pub fn name(self) -> &'static str {
        match self {
            Measure::Concentration => "concentration",
            Measure::Amount => "amount",
            Measure::Flow => "molar flow",
        }
    }
}

/// One measured species.
#[derive(Debug, Clone, PartialEq)]
pub struct Column {
    pub species: String,
    /// Index in the network (set by [`Data::check_against`]).
    pub index: usize,
    pub measure: Measure,
    /// The unit as written in the header.
    pub unit: String,
    /// SI per unit of the file: SI value = file value × factor.
    pub factor: f64,
    /// 1-based column of the header cell.
    pub column: usize,
}

/// One row: a run, a point and what was measured there (file units; `None` = missing).
#[derive(Debug, Clone, PartialEq)]
pub struct Sample {
    pub run: String,
    /// x in SI (s, m3 or kg).
    pub x: f64,
    pub line: usize,
    pub values: Vec<Option<f64>>,
}

/// A data file, parsed.
#[derive(Debug, Clone, PartialEq)]
pub struct Data {
    pub file: String,
    pub independent: Independent,
    /// The unit of x as written, and its SI factor.
    pub x_unit: String,
    pub x_factor: f64,
    /// 1-based column of the independent variable's header cell.
    pub x_column: usize,
    /// The header's line number (for errors about a column as a whole).
    pub header_line: usize,
    pub columns: Vec<Column>,
    pub samples: Vec<Sample>,
    /// Run ids in order of first appearance, with the line of that appearance.
    pub runs: Vec<(String, usize)>,
}

/// One cell of a CSV line: its text (quotes removed) and its 1-based column.
#[derive(Debug, Clone, PartialEq)]
pub struct Cell {
    pub text: String,
    pub column: usize,
}

/// Split one CSV line into cells (RFC 4180 quoting within the line: `"a,b"` and `""` for a
/// quote). `Err` is (column, message).
pub fn split_line(line: &str) -> Result<Vec<Cell>, (usize, String)> {
    let mut cells = Vec::new();
    let chars: Vec<char> = line.chars().collect();
    let mut i = 0;
    loop {
        let start = i;
        let mut text = String::new();
        if i < chars.len() && chars[i] == '"' {
            i += 1;
            loop {
                if i >= chars.len() {
                    return Err((start + 1, "a quoted cell is not closed on its line".into()));
                }
                if chars[i] == '"' {
                    if i + 1 < chars.len() && chars[i + 1] == '"' {
                        text.push('"');
                        i += 2;
                        continue;
                    }
                    i += 1;
                    break;
                }
                text.push(chars[i]);
                i += 1;
            }
            if i < chars.len() && chars[i] != ',' {
                return Err((i + 1, "text after a closing quote; expected `,`".into()));
            }
        } else {
            while i < chars.len() && chars[i] != ',' {
                text.push(chars[i]);
                i += 1;
            }
        }
        cells.push(Cell {
            text: text.trim().to_string(),
            column: start + 1,
        });
        if i >= chars.len() {
            break;
        }
        i += 1; // the comma
    }
    Ok(cells)
}

/// The lines of a CSV text that carry data: (1-based line number, text), skipping blank
/// lines and `#` comments; a byte-order mark and `\r` line ends are dropped.
pub fn content_lines(text: &str) -> impl Iterator<Item = (usize, &str)> {
    text.trim_start_matches('\u{feff}')
        .lines()
        .enumerate()
        .map(|(i, l)| (i + 1, l.trim_end_matches('\r')))
        .filter(|(_, l)| {
            let t = l.trim();
            !t.is_empty() && !t.starts_with('#')
        })
}

/// Read a CSV file's text with the size cap, as UTF-8.
pub fn read_csv_text(path: &std::path::Path, shown: &str) -> Result<String, DataError> {
    let whole = |message: String| DataError::at(shown, 0, 0, message);
    let meta = std::fs::metadata(path).map_err(|e| whole(format!("cannot read: {e}")))?;
    if meta.is_file() && meta.len() as usize > MAX_DATA_BYTES {
        return Err(whole(format!(
            "the file is too large ({} bytes; at most {MAX_DATA_BYTES})",
            meta.len()
        )));
    }
    if meta.is_dir() {
        return Err(whole("is a directory, not a CSV file".into()));
    }
    let bytes = std::fs::read(path).map_err(|e| whole(format!("cannot read: {e}")))?;
    String::from_utf8(bytes).map_err(|e| {
        let upto = &e.as_bytes()[..e.utf8_error().valid_up_to()];
        let line = upto.iter().filter(|&&b| b == b'\n').count() + 1;
        DataError::at(shown, line, 0, "the file is not UTF-8 text".into())
    })
}

/// "name [unit]" → (name, unit); the unit is required. `Err` is the message.
fn name_and_unit(cell: &str) -> Result<(String, String), String> {
    let Some(open) = cell.find('[') else {
        return Err(format!(
            "`{cell}` has no unit: write it in brackets, e.g. `{cell} [mol/L]`"
        ));
    };
    let Some(close) = cell.rfind(']') else {
        return Err(format!("`{cell}`: the unit's `[` is not closed by `]`"));
    };
    if close < open || !cell[close + 1..].trim().is_empty() {
        return Err(format!(
            "`{cell}`: expected `name [unit]` with nothing after `]`"
        ));
    }
    let name = cell[..open].trim().to_string();
    let unit = cell[open + 1..close].trim().to_string();
    if name.is_empty() {
        return Err(format!("`{cell}`: the column has a unit but no name"));
    }
    if unit.is_empty() {
        return Err(format!("`{cell}`: the brackets hold no unit"));
    }
    Ok((name, unit))
}

/// A number in a cell: finite, in plain or scientific notation.
fn number(text: &str) -> Result<f64, String> {
    let v: f64 = text
        .parse()
        .map_err(|_| format!("`{text}` is not a number"))?;
    if !v.is_finite() {
        return Err(format!("`{text}` is not a finite number"));
    }
    Ok(v)
}

impl Data {
    /// Parse a data CSV (`file` names it in messages). Species names and the kinds of
    /// measurement are checked against the study by [`Data::check_against`].
    pub fn parse(text: &str, file: &str) -> Result<Data, DataError> {
        let err = |line: usize, column: usize, message: String| {
            DataError::at(file, line, column, message)
        };
        let mut lines = content_lines(text);
        let Some((header_line, header)) = lines.next() else {
            return Err(err(
                0,
                0,
                "no header and no data: expected a header such as `run,t [min],A [mol/L]`".into(),
            ));
        };
        let cells = split_line(header).map_err(|(c, m)| err(header_line, c, m))?;
        if cells.len() < 3 {
            return Err(err(
                header_line,
                0,
                format!(
                    "the header has {} column(s); expected `run`, the independent variable and at least one species, e.g. `run,t [min],A [mol/L]`",
                    cells.len()
                ),
            ));
        }
        if !cells[0].text.eq_ignore_ascii_case("run") {
            return Err(err(
                header_line,
                cells[0].column,
                format!(
                    "the first column must be `run` (the run's id), got `{}`",
                    cells[0].text
                ),
            ));
        }
        let (xname, x_unit) =
            name_and_unit(&cells[1].text).map_err(|m| err(header_line, cells[1].column, m))?;
        let independent = match xname.as_str() {
            "t" => Independent::Time,
            "V" => Independent::Volume,
            "W" => Independent::CatalystMass,
            "tau" => Independent::ResidenceTime,
            other => {
                return Err(err(
                    header_line,
                    cells[1].column,
                    format!(
                        "the second column must be the independent variable `t` (batch time), `V` (volume), `W` (catalyst mass) or `tau` (residence time), got `{other}`"
                    ),
                ));
            }
        };
        let xu =
            parse_unit(&x_unit).map_err(|e| err(header_line, cells[1].column, e.to_string()))?;
        if !xu.dim.approx_eq(independent.dim()) || xu.offset != 0.0 {
            return Err(err(
                header_line,
                cells[1].column,
                format!(
                    "`{x_unit}` is not a unit of {} (column `{}`)",
                    match independent {
                        Independent::Time | Independent::ResidenceTime => "time, e.g. min",
                        Independent::Volume => "volume, e.g. L",
                        Independent::CatalystMass => "mass, e.g. kg",
                    },
                    xname
                ),
            ));
        }
        let mut columns: Vec<Column> = Vec::new();
        for c in &cells[2..] {
            let (species, unit) =
                name_and_unit(&c.text).map_err(|m| err(header_line, c.column, m))?;
            if let Some(prev) = columns.iter().find(|p| p.species == species) {
                return Err(err(
                    header_line,
                    c.column,
                    format!(
                        "species `{species}` is measured twice (also column {})",
                        prev.column
                    ),
                ));
            }
            let u = parse_unit(&unit).map_err(|e| err(header_line, c.column, e.to_string()))?;
            let measure = if u.offset != 0.0 {
                None
            } else if u.dim.approx_eq(Dim::concentration()) {
                Some(Measure::Concentration)
            } else if u.dim.approx_eq(Dim::AMOUNT) {
                Some(Measure::Amount)
            } else if u.dim.approx_eq(Dim::AMOUNT.div(Dim::TIME)) {
                Some(Measure::Flow)
            } else {
                None
            };
            let Some(measure) = measure else {
                return Err(err(
                    header_line,
                    c.column,
                    format!(
                        "`{unit}` (column `{species}`) is not a concentration (mol/L), an amount (mol) or a molar flow (mol/s)"
                    ),
                ));
            };
            columns.push(Column {
                species,
                index: usize::MAX,
                measure,
                unit,
                factor: u.factor,
                column: c.column,
            });
        }
        let mut samples = Vec::new();
        let mut runs: Vec<(String, usize)> = Vec::new();
        for (line, text) in lines {
            let cells = split_line(text).map_err(|(c, m)| err(line, c, m))?;
            if cells.len() != columns.len() + 2 {
                let column = cells
                    .get(columns.len() + 2)
                    .map_or(text.chars().count() + 1, |c| c.column);
                return Err(err(
                    line,
                    column,
                    format!(
                        "{} cells, the header has {} (leave a missing value empty: `r1,5,0.61,,0.02`)",
                        cells.len(),
                        columns.len() + 2
                    ),
                ));
            }
            let run = cells[0].text.clone();
            if run.is_empty() {
                return Err(err(line, cells[0].column, "the run id is empty".into()));
            }
            if cells[1].text.is_empty() {
                return Err(err(
                    line,
                    cells[1].column,
                    format!("the {} of the sample is missing", xname),
                ));
            }
            let x = number(&cells[1].text).map_err(|m| err(line, cells[1].column, m))?;
            if x < 0.0 {
                return Err(err(
                    line,
                    cells[1].column,
                    format!("{xname} must not be negative, got {x}"),
                ));
            }
            let mut values = Vec::with_capacity(columns.len());
            for (c, col) in cells[2..].iter().zip(&columns) {
                values.push(if c.text.is_empty() {
                    None
                } else {
                    Some(number(&c.text).map_err(|m| {
                        err(
                            line,
                            c.column,
                            format!("{m} (column `{} [{}]`)", col.species, col.unit),
                        )
                    })?)
                });
            }
            if !runs.iter().any(|(r, _)| *r == run) {
                runs.push((run.clone(), line));
            }
            samples.push(Sample {
                run,
                x: x * xu.factor,
                line,
                values,
            });
        }
        if samples.is_empty() {
            return Err(err(
                header_line,
                0,
                "the header is followed by no data rows".into(),
            ));
        }
        Ok(Data {
            file: file.to_string(),
            independent,
            x_unit,
            x_factor: xu.factor,
            x_column: cells[1].column,
            header_line,
            columns,
            samples,
            runs,
        })
    }

    /// Check the columns against the study: every species declared, each measurement
    /// possible in its reactor (amounts in a batch, flows in a flow reactor), the independent
    /// variable the reactor's own. Fills each column's species index.
    pub fn check_against(&mut self, net: &Network) -> Result<(), DataError> {
        let file = self.file.clone();
        let line = self.header_line;
        let err = |column: usize, message: String| DataError::at(&file, line, column, message);
        let kind = net.reactor.kind();
        let x_ok = matches!(
            (self.independent, kind),
            (Independent::Time, "batch")
                | (
                    Independent::Volume | Independent::ResidenceTime,
                    "pfr" | "cstr"
                )
                | (Independent::CatalystMass, "pbr")
        );
        if !x_ok {
            return Err(err(
                self.x_column,
                format!(
                    "`{}` cannot be the independent variable of a {kind}: use {}",
                    self.independent.name(),
                    match kind {
                        "batch" => "`t` (time)",
                        "pbr" => "`W` (catalyst mass)",
                        _ => "`V` (volume) or `tau` (residence time)",
                    }
                ),
            ));
        }
        for c in &mut self.columns {
            let Some(j) = net.species.iter().position(|s| s.name == c.species) else {
                let hint = net
                    .species
                    .iter()
                    .find(|s| s.name.eq_ignore_ascii_case(&c.species))
                    .map(|s| format!(" (did you mean `{}`?)", s.name))
                    .unwrap_or_default();
                return Err(err(
                    c.column,
                    format!("unknown species `{}`{hint}", c.species),
                ));
            };
            c.index = j;
            let ok = match c.measure {
                Measure::Concentration => true,
                Measure::Amount => net.reactor.is_batch(),
                Measure::Flow => !net.reactor.is_batch(),
            };
            if !ok {
                return Err(err(
                    c.column,
                    format!(
                        "`{}` is measured as {} ({}), which a {kind} does not have: give {}",
                        c.species,
                        match c.measure {
                            Measure::Amount => "an amount",
                            _ => "a molar flow",
                        },
                        c.unit,
                        if net.reactor.is_batch() {
                            "concentrations (mol/L) or amounts (mol)"
                        } else {
                            "concentrations (mol/L) or molar flows (mol/s)"
                        }
                    ),
                ));
            }
        }
        Ok(())
    }

    /// Number of non-missing measurements.
    pub fn observations(&self) -> usize {
        self.samples
            .iter()
            .map(|s| s.values.iter().filter(|v| v.is_some()).count())
            .sum()
    }

    /// The samples of one run.
    pub fn run_samples<'a>(&'a self, run: &'a str) -> impl Iterator<Item = &'a Sample> + 'a {
        self.samples.iter().filter(move |s| s.run == run)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn quoted_cells_and_columns() {
        let c = split_line("r1, 5 ,\"a,b\",\"x\"\"y\",").unwrap();
        let texts: Vec<&str> = c.iter().map(|c| c.text.as_str()).collect();
        assert_eq!(texts, ["r1", "5", "a,b", "x\"y", ""]);
        let cols: Vec<usize> = c.iter().map(|c| c.column).collect();
        assert_eq!(cols, [1, 4, 8, 14, 21]);
        assert_eq!(split_line("a,\"b").unwrap_err().0, 3);
    }

    #[test]
    fn a_data_file_reads_with_units_missing_cells_and_replicates() {
        let text = "# demo\nrun,t [min],A [mol/L],B [mmol/L]\nr1,0,1.0,0\nr1,5,0.61,\nr1,5,0.62,350\nr2,2,,10\n";
        let d = Data::parse(text, "d.csv").unwrap();
        assert_eq!(d.independent, Independent::Time);
        assert_eq!(d.header_line, 2);
        assert_eq!(d.samples.len(), 4);
        // 5 min = 300 s (NIST SP 811: 1 min = 60 s).
        assert_eq!(d.samples[1].x, 300.0);
        assert_eq!(d.samples[1].values, vec![Some(0.61), None]);
        assert_eq!(d.observations(), 6);
        assert_eq!(d.runs.len(), 2);
        // mmol/L = 1 mol/m3 (NIST SP 811).
        assert!((d.columns[1].factor - 1.0).abs() < 1e-12);
    }

    #[test]
    fn errors_name_line_and_column() {
        let e = Data::parse("run,t [min],A [mol/L]\nr1,0,abc\n", "d.csv").unwrap_err();
        assert_eq!((e.line, e.column), (2, 6));
        assert!(e.to_string().starts_with("d.csv:2:6: "), "{e}");
        let e = Data::parse("run,t [min],A\n", "d.csv").unwrap_err();
        assert_eq!((e.line, e.column), (1, 13));
        let e = Data::parse("run,t [degC],A [mol/L]\nr1,0,1\n", "d.csv").unwrap_err();
        assert_eq!((e.line, e.column), (1, 5));
        let e = Data::parse("run,t [s],A [K]\nr1,0,1\n", "d.csv").unwrap_err();
        assert_eq!((e.line, e.column), (1, 11));
        let e = Data::parse("run,t [s],A [mol]\nr1,0\n", "d.csv").unwrap_err();
        assert_eq!(e.line, 2);
        let e = Data::parse("run,t [s],A [mol]\nr1,-1,2\n", "d.csv").unwrap_err();
        assert_eq!((e.line, e.column), (2, 4));
    }
}
