//! Shards of a sweep: what each shard file says about where it came from (its provenance),
//! and the merge that checks a set of shards and writes the file the unsharded sweep writes.
//!
//! `rxnet sweep --shard K/N` keeps the points p with p mod N = K − 1 ([`super::sweep`]). A
//! shard file begins with four provenance lines that the unsharded output never has, so an
//! unsharded CSV or JSON stays exactly as it was:
//!
//! ```text
//! # rxnet_shard: 3/8
//! # rxnet_version: 0.1.0
//! # study_sha256: 5f0c…(64 hex digits)
//! # points: 1000
//! ```
//!
//! (CSV: comment lines, which CSV readers skip with a comment character of `#`). A JSON
//! shard is one JSON object with the same four keys and the rows under `rows`, laid out as
//! `serde_json`'s pretty printer lays out that object, so each row is the unsharded row
//! indented by two more spaces:
//!
//! ```text
//! {
//!   "rxnet_shard": "3/8",
//!   "rxnet_version": "0.1.0",
//!   "study_sha256": "5f0c…",
//!   "points": 1000,
//!   "rows": [
//!     { …row… },
//!     { …row… }
//!   ]
//! }
//! ```
//!
//! The study hash is SHA-256 (FIPS 180-4) of the study text and of every sweep argument that
//! changes the rows ([`SweepIdentity`]); shards whose hashes differ are shards of different
//! sweeps. A cryptographic hash is more than a mix-up needs, but it costs nothing here (the
//! study text is hashed once per shard) and its collisions are not a question.
//!
//! [`ShardSet::open`] reads the provenance of every file and refuses a set that is not the
//! N shards of one sweep written by this version of rxnet; [`ShardSet::write_merged`] then
//! reads the rows of the N files in step (point p is the next row of shard p mod N + 1),
//! checks each point number, and copies the rows' bytes unchanged, so the merged file is the
//! unsharded sweep's byte for byte. Memory is one row per shard, whatever the number of
//! points; every shard file is open at once.

use crate::model::Override;
use sha2::{Digest, Sha256};
use std::fs::File;
use std::io::{BufRead, BufReader, Read, Write};
use std::path::{Path, PathBuf};

/// The version of rxnet that writes (and merges) shards.
pub const VERSION: &str = env!("CARGO_PKG_VERSION");

/// The output format of a sweep.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Format {
    Csv,
    Json,
}

impl Format {
    fn name(self) -> &'static str {
        match self {
            Format::Csv => "CSV",
            Format::Json => "JSON",
        }
    }
}

/// Everything besides the program that fixes the rows of a sweep: the study text as read, the
/// study's path as given (a failed point's error quotes it, `study.yaml:6:18: field …`), and
/// the sweep's arguments that change a row (`--vary` in order, `--set` in order with
/// `--steady-state` as the override it becomes, `--rtol`, `--format`). `--out`, `--shard`
/// and `--plot-target` change no row and are left out; the number of threads changes none
/// either (rows are independent of the chunking).
#[derive(Debug, Clone, Copy)]
pub struct SweepIdentity<'a> {
    pub study_text: &'a str,
    /// The study's name in messages (`model::source::display_name`).
    pub study_name: &'a str,
    /// Each `--vary` as given on the command line (the same grid spelt differently gives a
    /// different hash: shards of one job are run with one command line).
    pub vary: &'a [String],
    pub set: &'a [Override],
    pub rtol: Option<f64>,
    pub format: Format,
}

impl SweepIdentity<'_> {
    /// SHA-256 of the identity, 64 lower-case hex digits. Each field is written as its byte
    /// length (8 bytes, little-endian) and its bytes, so no two identities share an encoding.
    pub fn sha256(&self) -> String {
        let mut h = Sha256::new();
        let mut field = |bytes: &[u8]| {
            h.update((bytes.len() as u64).to_le_bytes());
            h.update(bytes);
        };
        field(b"rxnet sweep rows 1");
        field(self.study_text.as_bytes());
        field(self.study_name.as_bytes());
        field(&(self.vary.len() as u64).to_le_bytes());
        for v in self.vary {
            field(v.as_bytes());
        }
        field(&(self.set.len() as u64).to_le_bytes());
        for s in self.set {
            field(s.path.as_bytes());
            field(s.value.as_bytes());
        }
        match self.rtol {
            None => field(b"rtol default"),
            Some(r) => field(&r.to_bits().to_le_bytes()),
        }
        field(self.format.name().as_bytes());
        hex(&h.finalize())
    }
}

fn hex(bytes: &[u8]) -> String {
    bytes.iter().map(|b| format!("{b:02x}")).collect()
}

/// Where a shard came from: which shard of how many, the rxnet that wrote it, the sweep (the
/// hash of [`SweepIdentity`]) and the number of points of the whole grid.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Provenance {
    /// K of `--shard K/N`, from 1.
    pub shard: usize,
    /// N of `--shard K/N`.
    pub shards: usize,
    pub version: String,
    pub study_sha256: String,
    /// Points of the whole grid (all shards).
    pub points: usize,
}

impl Provenance {
    /// The provenance of shard `shard` of `shards` of a sweep written by this rxnet.
    pub fn new(shard: (usize, usize), study_sha256: String, points: usize) -> Provenance {
        Provenance {
            shard: shard.0,
            shards: shard.1,
            version: VERSION.into(),
            study_sha256,
            points,
        }
    }

    /// The four comment lines at the top of a CSV shard.
    pub fn csv_preamble(&self) -> String {
        format!(
            "# rxnet_shard: {}/{}\n# rxnet_version: {}\n# study_sha256: {}\n# points: {}\n",
            self.shard, self.shards, self.version, self.study_sha256, self.points
        )
    }

    /// A JSON shard up to the opening bracket of its rows (no newline after it); the rows
    /// follow as elements indented by [`JSON_SHARD_INDENT`], then [`json_shard_closing`].
    pub fn json_opening(&self) -> String {
        format!(
            "{{\n  \"rxnet_shard\": \"{}/{}\",\n  \"rxnet_version\": {},\n  \"study_sha256\": \"{}\",\n  \"points\": {},\n  \"rows\": [",
            self.shard,
            self.shards,
            serde_json::Value::from(self.version.as_str()),
            self.study_sha256,
            self.points
        )
    }

    /// The number of points of this shard: those p < points with p mod N = K − 1.
    pub fn shard_points(&self) -> usize {
        super::sweep::shard_size(self.points, self.shard, self.shards)
    }
}

/// Indent of a row in the unsharded JSON array.
pub const JSON_INDENT: &str = "  ";
/// Indent of a row in a JSON shard (one level deeper, under `rows`).
pub const JSON_SHARD_INDENT: &str = "    ";

/// What ends a JSON shard that holds `rows` rows.
pub fn json_shard_closing(rows: usize) -> &'static str {
    if rows == 0 { "]\n}\n" } else { "\n  ]\n}\n" }
}

/// What ends the unsharded JSON array of `rows` rows (its opening is `[`).
pub fn json_closing(rows: usize) -> &'static str {
    if rows == 0 { "]\n" } else { "\n]\n" }
}

/// A pretty-printed JSON value as an element of a pretty-printed array, every line indented by
/// `indent`: a JSON string holds no raw newline, so indenting lines is exact, and rows
/// streamed one by one give the bytes `serde_json::to_string_pretty` gives for the whole
/// array (indent of two spaces) or for a shard's object (four).
pub fn json_element(pretty: &str, indent: &str) -> String {
    let mut o = String::with_capacity(pretty.len() + 16 * indent.len());
    for (i, line) in pretty.lines().enumerate() {
        if i > 0 {
            o.push('\n');
        }
        o.push_str(indent);
        o.push_str(line);
    }
    o
}

// ---------------------------------------------------------------------------------------
// Merge
// ---------------------------------------------------------------------------------------

/// Why a merge stopped: the shards cannot be merged (exit 2; the message names the file and
/// line), or the merged file could not be written (exit 1).
#[derive(Debug)]
pub enum MergeError {
    Invalid(String),
    Write(std::io::Error),
}

impl std::fmt::Display for MergeError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            MergeError::Invalid(m) => f.write_str(m),
            MergeError::Write(e) => write!(f, "{e}"),
        }
    }
}

/// What the merged file holds.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Merged {
    pub points: usize,
    pub failed: usize,
    pub format: Format,
}

/// Longest line a shard may have: a CSV row of a 10,000-species study is under 1 MiB.
const MAX_LINE: u64 = 64 << 20;

/// One shard file being read line by line.
struct ShardFile {
    /// The path as given, for messages.
    name: String,
    reader: BufReader<File>,
    /// Number of the line last read, from 1.
    line: usize,
    buf: Vec<u8>,
    prov: Provenance,
    format: Format,
}

impl ShardFile {
    fn open(path: &Path) -> Result<ShardFile, String> {
        let name = path.display().to_string();
        let file = File::open(path).map_err(|e| format!("cannot read {name}: {}", reason(&e)))?;
        let mut s = ShardFile {
            name,
            reader: BufReader::with_capacity(1 << 16, file),
            line: 0,
            buf: Vec::new(),
            prov: Provenance::new((1, 1), String::new(), 0),
            format: Format::Csv,
        };
        s.read_provenance()?;
        Ok(s)
    }

    /// `FILE:LINE`.
    fn at(&self) -> String {
        format!("{}:{}", self.name, self.line)
    }

    /// The next line without its newline, or None at the end of the file. A last line
    /// without its newline is a file cut short (every line rxnet writes ends with one); a
    /// line longer than [`MAX_LINE`] is refused (a foreign file is not read whole).
    fn next_line(&mut self) -> Result<Option<&str>, String> {
        self.buf.clear();
        let n = (&mut self.reader)
            .take(MAX_LINE)
            .read_until(b'\n', &mut self.buf)
            .map_err(|e| format!("cannot read {}: {}", self.name, reason(&e)))?;
        if n == 0 {
            return Ok(None);
        }
        self.line += 1;
        if n as u64 == MAX_LINE && self.buf.last() != Some(&b'\n') {
            return Err(format!(
                "{}: a line longer than {} MiB: not a line of an rxnet sweep",
                self.at(),
                MAX_LINE >> 20
            ));
        }
        if self.buf.pop() != Some(b'\n') {
            return Err(format!(
                "{}: the last line has no newline: the file was cut short",
                self.at()
            ));
        }
        std::str::from_utf8(&self.buf).map(Some).map_err(|_| {
            format!(
                "{}: not UTF-8 text: not a shard of an rxnet sweep",
                self.at()
            )
        })
    }

    /// The next line, which must exist (`what` says what was expected).
    fn expect_line(&mut self, what: &str) -> Result<String, String> {
        match self.next_line()? {
            Some(l) => Ok(l.to_string()),
            None => Err(format!(
                "{}:{}: the file ends where {what} belongs: the file was cut short",
                self.name,
                self.line + 1
            )),
        }
    }

    /// The four provenance lines (CSV comments or the JSON object's first keys).
    fn read_provenance(&mut self) -> Result<(), String> {
        let not_shard = |s: &ShardFile| {
            format!(
                "{}:1: not a shard of an rxnet sweep: it does not begin with the line `# rxnet_shard: K/N` (CSV) or the key \"rxnet_shard\" (JSON) that `rxnet sweep --shard K/N` writes",
                s.name
            )
        };
        let first = match self.next_line().map(|l| l.map(str::to_string)) {
            Ok(Some(l)) => l,
            Ok(None) => return Err(format!("{}: the file is empty: not a shard", self.name)),
            Err(_) if self.line <= 1 => return Err(not_shard(self)),
            Err(e) => return Err(e),
        };
        let field = |s: &mut ShardFile, key: &str, first: Option<&str>| -> Result<String, String> {
            let line = match first {
                Some(l) => l.to_string(),
                None => s.expect_line(&format!("the provenance line `{key}`"))?,
            };
            let value = match s.format {
                Format::Csv => line.strip_prefix(&format!("# {key}: ")).map(str::to_string),
                Format::Json => line
                    .strip_prefix(&format!("  \"{key}\": "))
                    .and_then(|v| v.strip_suffix(','))
                    .map(|v| v.trim_matches('"').to_string()),
            };
            value.ok_or_else(|| match first {
                Some(_) => not_shard(s),
                None => format!(
                    "{}: expected the provenance line `{key}` of a {} shard, found `{}`",
                    s.at(),
                    s.format.name(),
                    clip(&line)
                ),
            })
        };
        let shard = if first == "{" {
            self.format = Format::Json;
            let second = self.expect_line("the key \"rxnet_shard\"")?;
            if !second.starts_with("  \"rxnet_shard\": ") {
                return Err(not_shard(self));
            }
            field(self, "rxnet_shard", Some(&second))?
        } else {
            self.format = Format::Csv;
            field(self, "rxnet_shard", Some(&first))?
        };
        let shard_line = self.line;
        let (k, n) = shard
            .split_once('/')
            .and_then(|(k, n)| Some((k.parse::<usize>().ok()?, n.parse::<usize>().ok()?)))
            .filter(|&(k, n)| k >= 1 && k <= n)
            .ok_or_else(|| {
                format!(
                    "{}:{shard_line}: `rxnet_shard: {shard}` is not K/N with 1 ≤ K ≤ N",
                    self.name
                )
            })?;
        let version = field(self, "rxnet_version", None)?;
        let hash = field(self, "study_sha256", None)?;
        if hash.len() != 64 || !hash.bytes().all(|b| b.is_ascii_hexdigit()) {
            return Err(format!(
                "{}: `study_sha256: {}` is not 64 hex digits",
                self.at(),
                clip(&hash)
            ));
        }
        let points = field(self, "points", None)?;
        let points: usize = points.parse().ok().filter(|&p| p >= 1).ok_or_else(|| {
            format!(
                "{}: `points: {}` is not a whole number ≥ 1",
                self.at(),
                clip(&points)
            )
        })?;
        self.prov = Provenance {
            shard: k,
            shards: n,
            version,
            study_sha256: hash,
            points,
        };
        Ok(())
    }
}

/// A line shortened for a message.
fn clip(s: &str) -> String {
    const MAX: usize = 60;
    if s.chars().count() <= MAX {
        s.to_string()
    } else {
        let head: String = s.chars().take(MAX).collect();
        format!("{head}…")
    }
}

/// The reason of an I/O error in words (without the OS error number).
fn reason(e: &std::io::Error) -> String {
    let s = e.to_string();
    match s.find(" (os error") {
        Some(i) => s[..i].to_string(),
        None => s,
    }
}

/// The N shards of one sweep, checked and ordered by shard number, ready to merge.
pub struct ShardSet {
    shards: Vec<ShardFile>,
    /// The CSV column header (from shard 1).
    header: Option<String>,
    format: Format,
    points: usize,
}

impl ShardSet {
    /// Open every file and check that together they are the N shards of one sweep: each a
    /// shard, all written by this rxnet in one format, with one study hash, one N and one
    /// number of points, shards 1 to N each present once. The error names the file (and the
    /// line) and what is wrong.
    pub fn open(paths: &[PathBuf]) -> Result<ShardSet, String> {
        if paths.is_empty() {
            return Err("no shard files given".into());
        }
        let mut files = Vec::with_capacity(paths.len());
        for p in paths {
            files.push(ShardFile::open(p).map_err(|e| {
                if e.contains("Too many open files") {
                    format!(
                        "{e} ({} shard files are read at once: raise the limit with `ulimit -n`)",
                        paths.len()
                    )
                } else {
                    e
                }
            })?);
        }
        let first = &files[0];
        for f in &files[1..] {
            if f.format != first.format {
                return Err(format!(
                    "{} is a {} shard but {} is a {} shard: merge the shards of one sweep",
                    first.name,
                    first.format.name(),
                    f.name,
                    f.format.name()
                ));
            }
            if f.prov.version != first.prov.version {
                return Err(format!(
                    "rxnet version {} in {} but {} in {}: run every shard of a sweep with the same rxnet",
                    first.prov.version, first.name, f.prov.version, f.name
                ));
            }
            if f.prov.shards != first.prov.shards {
                return Err(format!(
                    "{} is shard {} of {} but {} is shard {} of {}: every shard of a sweep has the same N",
                    first.name,
                    first.prov.shard,
                    first.prov.shards,
                    f.name,
                    f.prov.shard,
                    f.prov.shards
                ));
            }
            if f.prov.study_sha256 != first.prov.study_sha256 {
                return Err(format!(
                    "study hash {}… in {} but {}… in {}: they are shards of different sweeps (the study's text or the path it was given by, or a sweep argument — --vary, --set, --rtol, --steady-state, --format — differs)",
                    &first.prov.study_sha256[..12],
                    first.name,
                    &f.prov.study_sha256[..12],
                    f.name
                ));
            }
            if f.prov.points != first.prov.points {
                return Err(format!(
                    "{} points in {} but {} in {}: they are shards of different sweeps",
                    first.prov.points, first.name, f.prov.points, f.name
                ));
            }
        }
        if first.prov.version != VERSION {
            return Err(format!(
                "{} was written by rxnet {} but this is rxnet {VERSION}: merge with the rxnet that wrote the shards",
                first.name, first.prov.version
            ));
        }
        let n = first.prov.shards;
        let mut slot: Vec<Option<ShardFile>> = (0..n).map(|_| None).collect();
        for f in files {
            let k = f.prov.shard;
            if let Some(other) = &slot[k - 1] {
                return Err(format!(
                    "shard {k} of {n} given twice: {} and {}",
                    other.name, f.name
                ));
            }
            slot[k - 1] = Some(f);
        }
        let missing: Vec<usize> = (1..=n).filter(|k| slot[k - 1].is_none()).collect();
        if !missing.is_empty() {
            let list: Vec<String> = missing.iter().take(10).map(usize::to_string).collect();
            return Err(format!(
                "missing shard{} {} of {n} ({} of {n} given){}",
                if missing.len() == 1 { "" } else { "s" },
                list.join(", "),
                n - missing.len(),
                if missing.len() > 10 {
                    "; more missing after those"
                } else {
                    ""
                }
            ));
        }
        let mut shards: Vec<ShardFile> = slot.into_iter().flatten().collect();
        let format = shards[0].format;
        let points = shards[0].prov.points;
        let header = match format {
            Format::Csv => {
                let s = &mut shards[0];
                let h = s.expect_line("the column header of shard 1")?;
                if !h.starts_with("point,") {
                    return Err(format!(
                        "{}: expected the column header (`point,…`) of shard 1, found `{}`",
                        s.at(),
                        clip(&h)
                    ));
                }
                Some(h)
            }
            Format::Json => None,
        };
        if format == Format::Json {
            for s in &mut shards {
                let want = if s.prov.shard_points() == 0 {
                    "  \"rows\": []"
                } else {
                    "  \"rows\": ["
                };
                let l = s.expect_line("the key \"rows\"")?;
                if l != want {
                    return Err(format!(
                        "{}: expected `{}` (shard {} of {} has {} of the {} points), found `{}`",
                        s.at(),
                        want.trim(),
                        s.prov.shard,
                        s.prov.shards,
                        s.prov.shard_points(),
                        s.prov.points,
                        clip(&l)
                    ));
                }
            }
        }
        Ok(ShardSet {
            shards,
            header,
            format,
            points,
        })
    }

    /// Read the rows of every shard in point order, check each, and write the file the
    /// unsharded sweep writes to `out`. Stops at the first problem; what was written to `out`
    /// by then is to be thrown away by the caller.
    pub fn write_merged(mut self, out: &mut dyn Write) -> Result<Merged, MergeError> {
        let w = |e: std::io::Error| MergeError::Write(e);
        let n = self.shards.len();
        let mut failed = 0usize;
        // Per shard: the rows read, the failed ones, the last point and its line.
        let mut read = vec![0usize; n];
        let mut shard_failed = vec![0usize; n];
        let mut last: Vec<Option<(usize, usize)>> = vec![None; n];
        match self.format {
            Format::Csv => {
                let mut h = self.header.take().unwrap_or_default();
                h.push('\n');
                out.write_all(h.as_bytes()).map_err(w)?;
            }
            Format::Json => out.write_all(b"[").map_err(w)?,
        }
        let mut element = String::new();
        for p in 0..self.points {
            let s = p % n;
            let shard = &mut self.shards[s];
            let (point, is_failed) = match self.format {
                Format::Csv => {
                    let line = shard
                        .next_line()
                        .map_err(MergeError::Invalid)?
                        .map(str::to_string);
                    let Some(line) = line else {
                        return Err(MergeError::Invalid(missing_at_end(shard, read[s], last[s])));
                    };
                    if line.starts_with('#') {
                        return Err(MergeError::Invalid(format!(
                            "{}: the rows end (`{}`) before point {p}: {}",
                            shard.at(),
                            clip(&line),
                            missing_points(shard, read[s])
                        )));
                    }
                    let point = csv_point(shard, &line)?;
                    check_point(shard, p, point, last[s])?;
                    let status = line
                        .split(',')
                        .skip(1)
                        .find(|f| f.parse::<f64>().is_err())
                        .unwrap_or("");
                    out.write_all(line.as_bytes()).map_err(w)?;
                    out.write_all(b"\n").map_err(w)?;
                    (point, status == "failed")
                }
                Format::Json => {
                    let (point, status, more) = json_row(shard, p, read[s], last[s], &mut element)?;
                    let expected_more = read[s] + 1 < shard.prov.shard_points();
                    if more && !expected_more {
                        return Err(MergeError::Invalid(format!(
                            "{}: a row follows point {point}, the last point of shard {} of {}",
                            shard.at(),
                            shard.prov.shard,
                            shard.prov.shards
                        )));
                    }
                    if !more && expected_more {
                        return Err(MergeError::Invalid(format!(
                            "{}: the rows end after point {point}: {}",
                            shard.at(),
                            missing_points(shard, read[s] + 1)
                        )));
                    }
                    out.write_all(if p == 0 { b"\n" } else { b",\n" })
                        .map_err(w)?;
                    out.write_all(element.as_bytes()).map_err(w)?;
                    (point, status == "failed")
                }
            };
            read[s] += 1;
            last[s] = Some((point, shard.line));
            if is_failed {
                failed += 1;
                shard_failed[s] += 1;
            }
        }
        // What follows the rows of each shard: CSV the failed-point trailer when a point
        // failed, JSON the end of the object; then the end of the file.
        for (s, shard) in self.shards.iter_mut().enumerate() {
            match self.format {
                Format::Csv => {
                    let trailer = shard
                        .next_line()
                        .map_err(MergeError::Invalid)?
                        .map(str::to_string);
                    let want = super::sweep::csv_failed_trailer(shard_failed[s], read[s]);
                    match trailer {
                        None if shard_failed[s] == 0 => {}
                        None => {
                            return Err(MergeError::Invalid(format!(
                                "{}: {} of its {} rows failed but the file ends without the line `{}`: the file was cut short",
                                shard.name,
                                shard_failed[s],
                                read[s],
                                want.trim_end()
                            )));
                        }
                        Some(l) if shard_failed[s] > 0 && l == want.trim_end() => {}
                        Some(l) if l.starts_with("# failed:") => {
                            return Err(MergeError::Invalid(format!(
                                "{}: the trailer says `{}` but the shard has {} failed rows of {}",
                                shard.at(),
                                clip(&l),
                                shard_failed[s],
                                read[s]
                            )));
                        }
                        Some(l) => {
                            return Err(MergeError::Invalid(extra_line(shard, &l)));
                        }
                    }
                }
                Format::Json => {
                    if shard.prov.shard_points() > 0 {
                        expect_exact(shard, "  ]")?;
                    }
                    expect_exact(shard, "}")?;
                }
            }
            if let Some(l) = shard
                .next_line()
                .map_err(MergeError::Invalid)?
                .map(str::to_string)
            {
                return Err(MergeError::Invalid(extra_line(shard, &l)));
            }
        }
        let closing = match self.format {
            Format::Csv if failed > 0 => super::sweep::csv_failed_trailer(failed, self.points),
            Format::Csv => String::new(),
            Format::Json => json_closing(self.points).to_string(),
        };
        out.write_all(closing.as_bytes()).map_err(w)?;
        Ok(Merged {
            points: self.points,
            failed,
            format: self.format,
        })
    }
}

fn extra_line(shard: &ShardFile, l: &str) -> String {
    format!(
        "{}: `{}` after the last point of shard {} of {}: not part of the shard",
        shard.at(),
        clip(l),
        shard.prov.shard,
        shard.prov.shards
    )
}

fn expect_exact(shard: &mut ShardFile, want: &str) -> Result<(), MergeError> {
    match shard.next_line().map_err(MergeError::Invalid)? {
        Some(l) if l == want => Ok(()),
        Some(l) => {
            let l = l.to_string();
            Err(MergeError::Invalid(format!(
                "{}: expected `{want}`, found `{}`",
                shard.at(),
                clip(&l)
            )))
        }
        None => Err(MergeError::Invalid(format!(
            "{}:{}: the file ends where `{want}` belongs: the file was cut short",
            shard.name,
            shard.line + 1
        ))),
    }
}

/// The points of a shard from its `read`-th row on, for a message.
fn missing_points(shard: &ShardFile, read: usize) -> String {
    let (k, n) = (shard.prov.shard, shard.prov.shards);
    let want = shard.prov.shard_points();
    let first = k - 1 + read * n;
    let more = want.saturating_sub(read + 1);
    format!(
        "point {first} of shard {k} of {n} is missing{} ({read} of its {want} rows present)",
        if more > 0 {
            format!(", and the {more} after it")
        } else {
            String::new()
        }
    )
}

/// The file ended before the shard's `read`-th row.
fn missing_at_end(shard: &ShardFile, read: usize, last: Option<(usize, usize)>) -> String {
    let after = match last {
        Some((q, line)) => format!(" after point {q} at line {line}"),
        None => String::new(),
    };
    format!(
        "{}: the file ends{after}: {}; the file was cut short",
        shard.name,
        missing_points(shard, read)
    )
}

/// The point number of a CSV row (its first field).
fn csv_point(shard: &ShardFile, line: &str) -> Result<usize, MergeError> {
    let first = line.split(',').next().unwrap_or("");
    first.parse::<usize>().map_err(|_| {
        MergeError::Invalid(format!(
            "{}: expected a row (a point number first), found `{}`",
            shard.at(),
            clip(line)
        ))
    })
}

/// Check that the row just read (point `got`, at the shard's current line) is point `want`.
fn check_point(
    shard: &ShardFile,
    want: usize,
    got: usize,
    last: Option<(usize, usize)>,
) -> Result<(), MergeError> {
    if got == want {
        return Ok(());
    }
    let (k, n, total) = (shard.prov.shard, shard.prov.shards, shard.prov.points);
    let msg = if let Some((_, line)) = last.filter(|(q, _)| *q == got) {
        format!(
            "point {got} twice, in {}:{line} and {}",
            shard.name,
            shard.at()
        )
    } else if got >= total {
        format!(
            "{}: point {got} is beyond the sweep's {total} points (0 to {})",
            shard.at(),
            total - 1
        )
    } else if got % n != k - 1 {
        format!(
            "{}: point {got} belongs to shard {} of {n}, not to this shard {k} of {n}",
            shard.at(),
            got % n + 1
        )
    } else if got > want {
        format!(
            "{}: point {want} is missing: the row here is point {got}, and point {want} belongs before it",
            shard.at()
        )
    } else {
        let after = last
            .map(|(q, _)| format!(" (after point {q})"))
            .unwrap_or_default();
        format!(
            "{}: point {got} out of order{after}: a shard lists its points in increasing order, each once",
            shard.at()
        )
    };
    Err(MergeError::Invalid(msg))
}

/// Read one row of a JSON shard into `element` (indented as in the unsharded array); returns
/// its point, its status and whether another row follows in this shard.
fn json_row(
    shard: &mut ShardFile,
    want: usize,
    read: usize,
    last: Option<(usize, usize)>,
    element: &mut String,
) -> Result<(usize, String, bool), MergeError> {
    let invalid = MergeError::Invalid;
    element.clear();
    let open = match shard.next_line().map_err(invalid)? {
        Some(l) => l.to_string(),
        None => return Err(invalid(missing_at_end(shard, read, last))),
    };
    if open != "    {" {
        return Err(invalid(format!(
            "{}: expected a row (`{{` indented by four spaces), found `{}`: {}",
            shard.at(),
            clip(&open),
            missing_points(shard, read)
        )));
    }
    let start = shard.line;
    element.push_str(&open[2..]);
    let more = loop {
        let line = match shard.next_line().map_err(invalid)? {
            Some(l) => l.to_string(),
            None => {
                return Err(invalid(format!(
                    "{}:{}: the file ends inside the row that begins at line {start}: the file was cut short",
                    shard.name,
                    shard.line + 1
                )));
            }
        };
        let Some(inner) = line.strip_prefix("  ").filter(|_| line.starts_with("    ")) else {
            return Err(invalid(format!(
                "{}: inside the row that begins at line {start}, found `{}`",
                shard.at(),
                clip(&line)
            )));
        };
        element.push('\n');
        match inner {
            "  }," => {
                element.push_str("  }");
                break true;
            }
            "  }" => {
                element.push_str("  }");
                break false;
            }
            _ => element.push_str(inner),
        }
    };
    #[derive(serde::Deserialize)]
    struct Row {
        point: usize,
        status: String,
    }
    let row: Row = serde_json::from_str(element).map_err(|e| {
        invalid(format!(
            "{}:{start}: the row that begins here is not a sweep row ({e})",
            shard.name
        ))
    })?;
    // Point checks name the line where the row begins.
    let end = shard.line;
    shard.line = start;
    let checked = check_point(shard, want, row.point, last);
    shard.line = end;
    checked?;
    Ok((row.point, row.status, more))
}

#[cfg(test)]
mod tests {
    use super::*;

    /// FIPS 180-4 (SHA-256) example "abc", digest as published with the standard's examples.
    #[test]
    fn sha256_of_abc_is_the_published_digest() {
        let got = hex(&Sha256::digest(b"abc"));
        assert_eq!(
            got,
            "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
        );
    }

    fn identity<'a>(text: &'a str, vary: &'a [String], set: &'a [Override]) -> SweepIdentity<'a> {
        SweepIdentity {
            study_text: text,
            study_name: "study.yaml",
            vary,
            set,
            rtol: None,
            format: Format::Csv,
        }
    }

    #[test]
    fn every_row_changing_argument_changes_the_hash() {
        let vary = vec!["feed.T=300 K:400 K:11".to_string()];
        let set = vec![Override {
            path: "reactor.volume".into(),
            value: "2 L".into(),
        }];
        let base = identity("name: a\n", &vary, &set);
        let h = base.sha256();
        assert_eq!(h.len(), 64);
        assert_eq!(h, base.sha256(), "the hash is not deterministic");
        let other_vary = vec!["feed.T=300 K:400 K:12".to_string()];
        let other_set = vec![Override {
            path: "reactor.volume".into(),
            value: "3 L".into(),
        }];
        let two_vary = vec![vary[0].clone(), "reactor.volume=1 L:2 L:2".into()];
        let changed = [
            identity("name: b\n", &vary, &set).sha256(),
            SweepIdentity {
                study_name: "other/study.yaml",
                ..base
            }
            .sha256(),
            identity("name: a\n", &other_vary, &set).sha256(),
            identity("name: a\n", &two_vary, &set).sha256(),
            identity("name: a\n", &vary, &other_set).sha256(),
            identity("name: a\n", &vary, &[]).sha256(),
            SweepIdentity {
                rtol: Some(1e-6),
                ..base
            }
            .sha256(),
            SweepIdentity {
                format: Format::Json,
                ..base
            }
            .sha256(),
        ];
        for (i, c) in changed.iter().enumerate() {
            assert_ne!(c, &h, "change {i} left the hash as it was");
        }
        // Moving bytes from one field to the next is a different identity.
        let a = vec!["ab".to_string(), "c".to_string()];
        let b = vec!["a".to_string(), "bc".to_string()];
        assert_ne!(
            identity("", &a, &[]).sha256(),
            identity("", &b, &[]).sha256()
        );
    }

    #[test]
    fn shard_point_counts_cover_the_grid_once() {
        for total in 1..30 {
            for n in 1..12 {
                let sum: usize = (1..=n)
                    .map(|k| Provenance::new((k, n), String::new(), total).shard_points())
                    .sum();
                assert_eq!(sum, total, "{total} points in {n} shards");
                for k in 1..=n {
                    let want = (0..total).filter(|p| p % n == k - 1).count();
                    assert_eq!(
                        Provenance::new((k, n), String::new(), total).shard_points(),
                        want
                    );
                }
            }
        }
    }

    #[test]
    fn a_json_shard_is_the_pretty_printed_object() {
        let prov = Provenance::new((2, 3), "ab".repeat(32), 7);
        let rows = [
            serde_json::json!({"point": 1, "status": "ok", "x": [1.5, 2]}),
            serde_json::json!({"point": 4, "status": "failed", "error": "a \"b\"\nc"}),
        ];
        let mut text = prov.json_opening();
        for (i, r) in rows.iter().enumerate() {
            text.push_str(if i == 0 { "\n" } else { ",\n" });
            text.push_str(&json_element(
                &serde_json::to_string_pretty(r).unwrap(),
                JSON_SHARD_INDENT,
            ));
        }
        text.push_str(json_shard_closing(rows.len()));
        let v: serde_json::Value = serde_json::from_str(&text).unwrap();
        assert_eq!(v["rxnet_shard"], "2/3");
        assert_eq!(v["points"], 7);
        assert_eq!(v["rows"].as_array().unwrap().len(), 2);
        let empty = prov.json_opening() + json_shard_closing(0);
        let v: serde_json::Value = serde_json::from_str(&empty).unwrap();
        assert_eq!(v["rows"], serde_json::json!([]));
    }
}
