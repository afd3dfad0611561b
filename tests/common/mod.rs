//! Helpers shared by the integration tests: run the `rxnet` binary on a study written to a
//! unique temporary file, and read its exit code, stdout and stderr.

#![allow(dead_code)]

use std::path::{Path, PathBuf};
use std::process::Command;
use std::sync::atomic::{AtomicUsize, Ordering};

/// What one run of the binary gave.
pub struct Run {
    pub code: i32,
    pub stdout: String,
    pub stderr: String,
}

impl Run {
    /// The JSON output of a command that must succeed: exit 0, else the test fails showing
    /// both streams.
    pub fn ok_json(&self) -> serde_json::Value {
        assert_eq!(
            self.code, 0,
            "command failed:\nstdout:\n{}\nstderr:\n{}",
            self.stdout, self.stderr
        );
        self.json()
    }

    /// Parse stdout as JSON, failing the test with the run's output when it does not parse.
    pub fn json(&self) -> serde_json::Value {
        serde_json::from_str(&self.stdout).unwrap_or_else(|e| {
            panic!(
                "stdout is not JSON ({e}):\n{}\nstderr:\n{}",
                self.stdout, self.stderr
            )
        })
    }
}

/// A JSON value that must be a number (`what` names it in the failure).
pub fn num(v: &serde_json::Value, what: &str) -> f64 {
    v.as_f64()
        .unwrap_or_else(|| panic!("{what} is not a number: {v}"))
}

/// CSV text to (header, rows); empty cells are None.
pub fn read_csv(text: &str) -> (Vec<String>, Vec<Vec<Option<f64>>>) {
    let mut lines = text.lines();
    let header = lines
        .next()
        .expect("a header")
        .split(',')
        .map(str::to_string)
        .collect();
    let rows = lines
        .map(|l| {
            l.split(',')
                .map(|c| {
                    (!c.is_empty()).then(|| {
                        c.parse::<f64>()
                            .unwrap_or_else(|e| panic!("`{c}` is not a number: {e}"))
                    })
                })
                .collect()
        })
        .collect();
    (header, rows)
}

static COUNTER: AtomicUsize = AtomicUsize::new(0);

/// The absolute path of a bundled study in `networks/`.
pub fn network(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("networks")
        .join(name)
}

/// Write `text` to a new file in the system temporary directory; the name is unique per
/// process, call and time so that parallel tests and parallel test binaries never collide.
pub fn write_temp(tag: &str, text: &str) -> PathBuf {
    let n = COUNTER.fetch_add(1, Ordering::SeqCst);
    let nanos = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map(|d| d.as_nanos())
        .unwrap_or(0);
    let path = std::env::temp_dir().join(format!(
        "rxnet-test-{}-{tag}-{n}-{nanos}.yaml",
        std::process::id()
    ));
    std::fs::write(&path, text).expect("write a temporary study file");
    path
}

/// Run `rxnet` with these arguments.
pub fn rxnet(args: &[&str]) -> Run {
    let out = Command::new(env!("CARGO_BIN_EXE_rxnet"))
        .args(args)
        .output()
        .expect("start the rxnet binary");
    Run {
        code: out.status.code().unwrap_or(-1),
        stdout: String::from_utf8_lossy(&out.stdout).into_owned(),
        stderr: String::from_utf8_lossy(&out.stderr).into_owned(),
    }
}

/// Run `rxnet COMMAND FILE [--format FORMAT]` on a study given as text; the temporary file
/// is removed afterwards.
pub fn run_study(command: &str, tag: &str, yaml: &str, format: &str) -> Run {
    let path = write_temp(tag, yaml);
    let p = path.to_str().expect("temporary path is UTF-8");
    let run = rxnet(&[command, p, "--format", format]);
    let _ = std::fs::remove_file(&path);
    run
}

/// `rxnet check FILE --format json` on a study given as text.
pub fn check_json(tag: &str, yaml: &str) -> Run {
    run_study("check", tag, yaml, "json")
}

/// `rxnet table FILE --format json` on a study given as text.
pub fn table_json(tag: &str, yaml: &str) -> Run {
    run_study("table", tag, yaml, "json")
}

/// 1-based number of the first line of `text` that contains `needle`.
pub fn line_of(text: &str, needle: &str) -> usize {
    text.lines()
        .position(|l| l.contains(needle))
        .unwrap_or_else(|| panic!("`{needle}` is not in the study text"))
        + 1
}

/// `rxnet run FILE ARGS...` on a study given as text; the temporary file is removed afterwards.
pub fn run_args(tag: &str, yaml: &str, args: &[&str]) -> Run {
    let path = write_temp(tag, yaml);
    let p = path.to_str().expect("temporary path is UTF-8");
    let mut all = vec!["run", p];
    all.extend_from_slice(args);
    let run = rxnet(&all);
    let _ = std::fs::remove_file(&path);
    run
}

/// |got − want| / |want|, or |got| when want is 0.
pub fn rel_err(got: f64, want: f64) -> f64 {
    if want == 0.0 {
        got.abs()
    } else {
        (got - want).abs() / want.abs()
    }
}

/// The worst relative error seen by one family of comparisons; each comparison also asserts
/// its own tolerance. `report` prints the figure (visible with `--nocapture`).
pub struct Agreement {
    what: String,
    worst: f64,
    count: usize,
}

impl Agreement {
    pub fn new(what: &str) -> Agreement {
        Agreement {
            what: what.to_string(),
            worst: 0.0,
            count: 0,
        }
    }

    /// Require rel_err(got, want) <= tol; `context` names the value in the failure message.
    pub fn check(&mut self, got: f64, want: f64, tol: f64, context: &str) {
        let e = rel_err(got, want);
        assert!(
            got.is_finite() && e <= tol,
            "{}: {context}: got {got:.15e}, expected {want:.15e}, relative error {e:.3e} > {tol:.0e}",
            self.what
        );
        self.worst = self.worst.max(e);
        self.count += 1;
    }

    pub fn worst(&self) -> f64 {
        self.worst
    }

    /// Print the worst error; fails when nothing was compared (a check that asserts nothing).
    pub fn report(&self) {
        assert!(self.count > 0, "{}: no value was compared", self.what);
        println!(
            "agreement | {} | {} values | max relative error {:.2e}",
            self.what, self.count, self.worst
        );
    }
}

/// A file in the system temporary directory that is removed when dropped.
pub struct TempFile {
    pub path: PathBuf,
}

impl TempFile {
    /// The path as text (temporary paths are UTF-8 in the test environments).
    pub fn p(&self) -> &str {
        self.path.to_str().expect("temporary path is UTF-8")
    }
}

impl Drop for TempFile {
    fn drop(&mut self) {
        let _ = std::fs::remove_file(&self.path);
    }
}

/// A study written to a temporary file that lives as long as the returned value.
pub fn temp_study(tag: &str, yaml: &str) -> TempFile {
    TempFile {
        path: write_temp(tag, yaml),
    }
}

/// A unique temporary path with extension `ext` for an output file (not created here).
pub fn temp_out(tag: &str, ext: &str) -> TempFile {
    let n = COUNTER.fetch_add(1, Ordering::SeqCst);
    let nanos = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map(|d| d.as_nanos())
        .unwrap_or(0);
    TempFile {
        path: std::env::temp_dir().join(format!(
            "rxnet-test-{}-{tag}-{n}-{nanos}.{ext}",
            std::process::id()
        )),
    }
}

/// Carbon and hydrogen atoms in a vector of species amounts or flows (from the formulas).
pub fn carbon_hydrogen(net: &rxnet::Network, y: &[f64]) -> (f64, f64) {
    let (mut c, mut h) = (0.0, 0.0);
    for (s, v) in net.species.iter().zip(y) {
        let atoms = s
            .formula
            .as_ref()
            .expect("every species has a formula")
            .atoms();
        c += atoms.get("C").copied().unwrap_or(0.0) * v;
        h += atoms.get("H").copied().unwrap_or(0.0) * v;
    }
    (c, h)
}

/// Rank of a float matrix by Gauss–Jordan elimination with partial pivoting, counting pivots
/// larger than `tol` in magnitude: the plain floating-point reference the exact analysis is
/// compared with (textbook elimination, common practice).
pub fn float_rank(mut m: Vec<Vec<f64>>, tol: f64) -> usize {
    let rows = m.len();
    let cols = m.first().map_or(0, |r| r.len());
    let mut r = 0;
    for c in 0..cols {
        if r == rows {
            break;
        }
        let Some(p) = (r..rows)
            .filter(|&i| m[i][c].abs() > tol)
            .max_by(|&a, &b| m[a][c].abs().total_cmp(&m[b][c].abs()))
        else {
            continue;
        };
        m.swap(r, p);
        let pivot = m[r].clone();
        for (i, row) in m.iter_mut().enumerate() {
            if i != r {
                let f = row[c] / pivot[c];
                for (x, q) in row.iter_mut().zip(&pivot) {
                    *x -= f * q;
                }
            }
        }
        r += 1;
    }
    r
}

/// A gas batch in a vessel that holds exactly its charge at 400 K and 1 bar (test values):
/// sweep points off the ideal-gas fit of the charge to the vessel fail to load, which makes
/// failed rows for the sweep and merge tests.
pub fn gas_batch() -> String {
    // Ideal gas (common practice): V = N R T / P = 1 mol × R × 400 K / 1e5 Pa, R = N_A k exactly
    // (CODATA 2018).
    let v_l = 8.314_462_618_153_24 * 400.0 / 1e5 * 1e3;
    format!(
        "name: gas batch sweep (test values)
phase: gas
species: {{A: null, B: null}}
reactions:
  - {{id: r1, stoich: A -> B, rate: {{k: 0.01 1/s}}}}
feed: {{T: 400 K, P: 1 bar, amounts: {{A: 1 mol}}}}
reactor: {{type: batch, time: 60 s, volume: {v_l:.9} L}}
key: A
desired: B
"
    )
}
