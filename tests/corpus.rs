//! Hostile and malformed input, run through the real binary and the parsers:
//!
//! - every bad study under `tests/bad_corpus/<kind>/NAME.yaml` gives the exit code and the words
//!   its sidecar `NAME.expect` names, without a panic (format of `.expect`: first line
//!   `<exit code> <command>`, command `check` or `run`; every further non-empty line is a
//!   substring stderr must contain);
//! - every saved fuzz regression input and every file of the minimised fuzz corpora goes
//!   through the four fuzzed parsers without a panic;
//! - huge files, deeply nested YAML and an enormous sweep are refused or handled within
//!   bounded time and memory.

mod common;

use common::{Run, rxnet, write_temp};
use std::panic::{AssertUnwindSafe, catch_unwind};
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

/// Files with extension `ext` directly inside `dir`, sorted.
fn files_in(dir: &Path, ext: Option<&str>) -> Vec<PathBuf> {
    let Ok(rd) = std::fs::read_dir(dir) else {
        return Vec::new();
    };
    let mut v: Vec<PathBuf> = rd
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| p.is_file())
        .filter(|p| ext.is_none_or(|x| p.extension().is_some_and(|e| e == x)))
        .collect();
    v.sort();
    v
}

fn subdirs(dir: &Path) -> Vec<PathBuf> {
    let Ok(rd) = std::fs::read_dir(dir) else {
        return Vec::new();
    };
    let mut v: Vec<PathBuf> = rd
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| p.is_dir())
        .collect();
    v.sort();
    v
}

/// One `.expect` sidecar: exit code, command and required substrings of stderr.
struct Expect {
    code: i32,
    command: String,
    words: Vec<String>,
}

fn read_expect(path: &Path) -> Expect {
    let text = std::fs::read_to_string(path)
        .unwrap_or_else(|e| panic!("{}: cannot read: {e}", path.display()));
    let mut lines = text.lines();
    let first = lines
        .next()
        .unwrap_or_else(|| panic!("{}: empty .expect file", path.display()));
    let (code, command) = first
        .split_once(' ')
        .unwrap_or_else(|| panic!("{}: first line is `<code> <command>`", path.display()));
    let code: i32 = code
        .trim()
        .parse()
        .unwrap_or_else(|_| panic!("{}: bad exit code `{code}`", path.display()));
    let command = command.trim().to_string();
    assert!(
        command == "check" || command == "run",
        "{}: command must be check or run, got `{command}`",
        path.display()
    );
    let words: Vec<String> = lines
        .map(|l| l.trim_end().to_string())
        .filter(|l| !l.is_empty())
        .collect();
    assert!(
        !words.is_empty(),
        "{}: name at least one word the message must contain",
        path.display()
    );
    Expect {
        code,
        command,
        words,
    }
}

/// The kinds of bad study, each a folder of `tests/bad_corpus`.
const KINDS: [&str; 8] = [
    "syntax",
    "names",
    "units",
    "dimensions",
    "ranges",
    "feeds",
    "unsupported",
    "numerics",
];

#[test]
fn bad_corpus_is_refused_as_expected() {
    let base = root().join("tests").join("bad_corpus");
    let mut failures = Vec::new();
    let mut total = 0;
    for kind in KINDS {
        let dir = base.join(kind);
        let studies = files_in(&dir, Some("yaml"));
        assert!(
            !studies.is_empty(),
            "no bad studies of kind `{kind}` in {}",
            dir.display()
        );
        for study in studies {
            total += 1;
            let exp = read_expect(&study.with_extension("expect"));
            if kind == "numerics" {
                assert_eq!(
                    (exp.code, exp.command.as_str()),
                    (1, "run"),
                    "{}: a numerics case loads and fails in `rxnet run` (exit 1)",
                    study.display()
                );
            }
            let run = rxnet(&[&exp.command, study.to_str().expect("UTF-8 path")]);
            let mut why = Vec::new();
            if run.code != exp.code {
                why.push(format!("exit code {} (expected {})", run.code, exp.code));
            }
            if run.stderr.contains("panicked") {
                why.push("panicked".to_string());
            }
            if run.code == 2 && !run.stdout.is_empty() {
                why.push(format!("stdout not empty: {}", run.stdout));
            }
            if !run.stderr.starts_with("error: ") {
                why.push("stderr does not start with `error: `".to_string());
            }
            for w in &exp.words {
                if !run.stderr.contains(w.as_str()) {
                    why.push(format!("stderr lacks `{w}`"));
                }
            }
            if !why.is_empty() {
                failures.push(format!(
                    "{}: {}\n  stderr: {}",
                    study.display(),
                    why.join("; "),
                    run.stderr.trim_end()
                ));
            }
        }
    }
    // Every .expect has its study (no orphaned expectation).
    for kind in KINDS {
        for e in files_in(&base.join(kind), Some("expect")) {
            assert!(
                e.with_extension("yaml").is_file(),
                "{}: no study for this expectation",
                e.display()
            );
        }
    }
    assert!(total >= 40, "only {total} bad studies");
    assert!(
        failures.is_empty(),
        "{} of {total} bad studies misbehaved:\n{}",
        failures.len(),
        failures.join("\n")
    );
}

/// Run the four fuzzed parsers on `data`; returns the panic message if one panicked.
fn parse_all(data: &[u8]) -> Option<String> {
    let Ok(text) = std::str::from_utf8(data) else {
        return None;
    };
    let declared = [
        "A", "B", "C", "D", "B2", "H2", "O2", "H2O", "CO", "CO2", "CH4",
    ];
    let outcome = catch_unwind(AssertUnwindSafe(|| {
        if let Ok(net) = rxnet::load_str(text, "corpus.yaml", &[]) {
            let _ = rxnet::analysis::check(&net);
        }
        let _ = rxnet::model::equation::parse_equation(text, &|s| declared.contains(&s));
        let _ = rxnet::model::formula::Formula::parse(text);
        let _ = rxnet::units::parse_unit(text);
        let _ = rxnet::units::parse_quantity(text);
    }));
    outcome.err().map(|p| {
        p.downcast_ref::<String>()
            .cloned()
            .or_else(|| p.downcast_ref::<&str>().map(|s| s.to_string()))
            .unwrap_or_else(|| "non-string panic".to_string())
    })
}

/// Saved fuzz crashes (`tests/fuzz_regressions/<target>/`) and the minimised fuzz corpora
/// (`fuzz/min_corpus/<target>/`), through every parser. The corpora are small (a few hundred
/// files); a missing folder counts as empty, but both together must hold inputs.
#[test]
fn fuzz_inputs_do_not_panic() {
    let mut inputs = Vec::new();
    for base in [
        root().join("tests").join("fuzz_regressions"),
        root().join("fuzz").join("min_corpus"),
    ] {
        for target in subdirs(&base) {
            inputs.extend(files_in(&target, None));
        }
    }
    assert!(
        inputs.len() >= 20,
        "only {} fuzz inputs found; run the fuzzers and minimise their corpora into fuzz/min_corpus",
        inputs.len()
    );
    // The default panic hook would print every caught panic; keep the output readable.
    let hook = std::panic::take_hook();
    std::panic::set_hook(Box::new(|_| {}));
    let mut panics = Vec::new();
    for p in &inputs {
        let data = std::fs::read(p).expect("read a fuzz input");
        if let Some(msg) = parse_all(&data) {
            panics.push(format!("{}: {msg}", p.display()));
        }
    }
    std::panic::set_hook(hook);
    println!(
        "fuzz inputs | {} files | {} panics",
        inputs.len(),
        panics.len()
    );
    assert!(
        panics.is_empty(),
        "{} of {} fuzz inputs panic:\n{}",
        panics.len(),
        inputs.len(),
        panics.join("\n")
    );
}

/// The outcome of a run watched for time and memory.
struct Watched {
    run: Run,
    seconds: f64,
    /// Peak resident memory in MiB (Linux: VmHWM of /proc/PID/status, sampled), 0 elsewhere.
    peak_mib: f64,
    /// Whether the child was killed for exceeding a limit.
    killed: Option<String>,
}

/// Peak resident set (VmHWM) of a running process in MiB, where /proc is available.
fn vm_hwm_mib(pid: u32) -> Option<f64> {
    let s = std::fs::read_to_string(format!("/proc/{pid}/status")).ok()?;
    let line = s.lines().find(|l| l.starts_with("VmHWM:"))?;
    let kb: f64 = line.split_whitespace().nth(1)?.parse().ok()?;
    Some(kb / 1024.0)
}

/// Run `rxnet ARGS`, killing it when it runs longer than `max_secs` or its resident memory
/// passes `max_mib`, so that a runaway input cannot take the shared machine down.
fn run_watched(args: &[&str], max_secs: f64, max_mib: f64) -> Watched {
    let start = Instant::now();
    let mut child = Command::new(env!("CARGO_BIN_EXE_rxnet"))
        .args(args)
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("start the rxnet binary");
    // Drain the pipes in threads so a chatty child cannot block on a full pipe.
    let mut out = child.stdout.take().expect("piped stdout");
    let mut err = child.stderr.take().expect("piped stderr");
    let t_out = std::thread::spawn(move || {
        let mut s = Vec::new();
        std::io::Read::read_to_end(&mut out, &mut s).ok();
        s
    });
    let t_err = std::thread::spawn(move || {
        let mut s = Vec::new();
        std::io::Read::read_to_end(&mut err, &mut s).ok();
        s
    });
    let mut peak: f64 = 0.0;
    let mut killed = None;
    let status = loop {
        if let Some(m) = vm_hwm_mib(child.id()) {
            peak = peak.max(m);
        }
        if let Some(st) = child.try_wait().expect("wait for rxnet") {
            break st;
        }
        let t = start.elapsed().as_secs_f64();
        if killed.is_none() && (t > max_secs || peak > max_mib) {
            killed = Some(format!(
                "killed after {t:.1} s at {peak:.0} MiB (limits {max_secs} s, {max_mib} MiB)"
            ));
            let _ = child.kill();
        }
        std::thread::sleep(Duration::from_millis(10));
    };
    let seconds = start.elapsed().as_secs_f64();
    let stdout = String::from_utf8_lossy(&t_out.join().expect("stdout thread")).into_owned();
    let stderr = String::from_utf8_lossy(&t_err.join().expect("stderr thread")).into_owned();
    Watched {
        run: Run {
            code: status.code().unwrap_or(-1),
            stdout,
            stderr,
        },
        seconds,
        peak_mib: peak,
        killed,
    }
}

/// A small valid study; the hostile files below are built around it.
const STUDY: &str = "name: hostile input base (demo values)
phase: liquid
species:
  A: {formula: C2H4}
  B: {formula: H2}
  C: {formula: C2H6}
reactions:
  - id: r1
    stoich: A + B -> C
    rate: {k: 1.0e-3 m3/(mol*s)}
feed:
  T: 300 K
  volumetric: 1 L/s
  flows: {A: 1 mol/s, B: 2 mol/s}
reactor:
  type: pfr
  volume: 1 m3
";

const MIB: usize = 1024 * 1024;

/// Write a study of about `bytes` bytes: the base study followed by comment lines.
fn study_with_comment(tag: &str, bytes: usize) -> PathBuf {
    let line = format!("# {}\n", "x".repeat(97));
    let mut text = String::with_capacity(bytes + STUDY.len());
    text.push_str(STUDY);
    while text.len() < bytes {
        text.push_str(&line);
    }
    write_temp(tag, &text)
}

fn remove(p: &Path) {
    let _ = std::fs::remove_file(p);
}

/// 50 MB of comment after a valid study: read and checked within bounded time and memory
/// (measured in release: 0.4 s to 3 s, 55 MiB; the limits leave room for a loaded machine
/// and a debug build).
#[test]
fn fifty_megabyte_comment_is_handled_in_bounded_time() {
    let path = study_with_comment("huge-comment", 50 * MIB);
    let w = run_watched(&["check", path.to_str().expect("UTF-8")], 120.0, 1024.0);
    remove(&path);
    println!(
        "50 MB comment | exit {} | {:.2} s | peak {:.0} MiB",
        w.run.code, w.seconds, w.peak_mib
    );
    assert_eq!(w.killed, None, "stderr: {}", w.run.stderr);
    assert_eq!(w.run.code, 0, "stderr: {}", w.run.stderr);
    assert!(!w.run.stderr.contains("panicked"), "{}", w.run.stderr);
    assert!(
        w.run
            .stdout
            .contains("rank of the stoichiometric matrix: 1")
    );
}

/// A 50 MB scalar (the study's name): read within bounded time and memory.
#[test]
fn fifty_megabyte_scalar_is_handled_in_bounded_time() {
    let text = STUDY.replace(
        "name: hostile input base (demo values)",
        &format!("name: {}", "y".repeat(50 * MIB)),
    );
    let path = write_temp("huge-scalar", &text);
    drop(text);
    let w = run_watched(&["check", path.to_str().expect("UTF-8")], 120.0, 1024.0);
    remove(&path);
    println!(
        "50 MB scalar | exit {} | {:.2} s | peak {:.0} MiB",
        w.run.code, w.seconds, w.peak_mib
    );
    assert_eq!(w.killed, None, "stderr: {}", w.run.stderr);
    assert!(
        w.run.code == 0 || w.run.code == 2,
        "exit {}: {}",
        w.run.code,
        w.run.stderr
    );
    assert!(!w.run.stderr.contains("panicked"), "{}", w.run.stderr);
}

/// A file over the 64 MiB limit is refused before it is read, quickly, with exit 2.
#[test]
fn file_over_the_limit_is_refused_quickly() {
    let path = study_with_comment("over-limit", 65 * MIB);
    let w = run_watched(&["check", path.to_str().expect("UTF-8")], 30.0, 512.0);
    remove(&path);
    println!(
        "65 MiB file | exit {} | {:.2} s | peak {:.0} MiB",
        w.run.code, w.seconds, w.peak_mib
    );
    assert_eq!(w.killed, None);
    assert_eq!(w.run.code, 2, "stderr: {}", w.run.stderr);
    assert!(w.run.stdout.is_empty());
    assert!(w.run.stderr.contains("at most"), "{}", w.run.stderr);
    // Refused from the file's size, so it never holds the text in memory.
    assert!(w.peak_mib < 64.0, "peak {:.0} MiB", w.peak_mib);
}

/// A study with `n` extra species S0..S(n−1) that are in no reaction (inerts).
fn many_inert_species(n: usize) -> String {
    let mut sp = String::new();
    for i in 0..n {
        sp.push_str(&format!("  S{i}: {{}}\n"));
    }
    STUDY.replace(
        "  C: {formula: C2H6}\n",
        &format!("  C: {{formula: C2H6}}\n{sp}"),
    )
}

/// A study with one reaction A -> S0 + S1 + ... + S(n−1): n reacting species, rank 1, so n
/// conservation laws among the reacting species.
fn many_products(n: usize) -> String {
    let sp: String = (0..n).map(|i| format!("  S{i}: {{}}\n")).collect();
    let products: Vec<String> = (0..n).map(|i| format!("S{i}")).collect();
    format!(
        "name: one reaction, many products (demo values)\nphase: liquid\nspecies:\n  A: {{}}\n{sp}reactions:\n  - id: r1\n    stoich: A -> {}\n    rate: {{k: 1.0e-3 1/s}}\nfeed: {{T: 300 K, volumetric: 1 L/s, flows: {{A: 1 mol/s}}}}\nreactor: {{type: pfr, volume: 1 m3}}\n",
        products.join(" + ")
    )
}

/// A chain S0 -> S1 -> ... -> S(n−1): n species, n − 1 reactions.
fn chain(n: usize) -> String {
    let sp: String = (0..n).map(|i| format!("  S{i}: {{}}\n")).collect();
    let rx: String = (0..n - 1)
        .map(|i| {
            format!(
                "  - {{id: r{i}, stoich: S{i} -> S{}, rate: {{k: 1.0e-3 1/s}}}}\n",
                i + 1
            )
        })
        .collect();
    format!(
        "name: chain (demo values)\nphase: liquid\nspecies:\n{sp}reactions:\n{rx}feed: {{T: 300 K, volumetric: 1 L/s, flows: {{S0: 1 mol/s}}}}\nreactor: {{type: pfr, volume: 1 m3}}\n"
    )
}

/// `rxnet check --format json` on `text` within `max_secs` and `max_mib`; exit 0 or 1 and no
/// panic. Returns the report, after checking rank–nullity on it: the number of conservation
/// laws is species − rank (standard linear algebra, from memory).
fn check_within(tag: &str, text: &str, max_secs: f64, max_mib: f64) -> serde_json::Value {
    let path = write_temp(tag, text);
    let w = run_watched(
        &["check", path.to_str().expect("UTF-8"), "--format", "json"],
        max_secs,
        max_mib,
    );
    remove(&path);
    println!(
        "{tag} | {} bytes | exit {} | {:.2} s | peak {:.0} MiB",
        text.len(),
        w.run.code,
        w.seconds,
        w.peak_mib
    );
    assert_eq!(w.killed, None, "{tag}: stderr: {}", w.run.stderr);
    assert!(
        w.run.code == 0 || w.run.code == 1,
        "{tag}: exit {}: {}",
        w.run.code,
        w.run.stderr
    );
    assert!(
        !w.run.stderr.contains("panicked"),
        "{tag}: {}",
        w.run.stderr
    );
    let v: serde_json::Value = serde_json::from_str(&w.run.stdout).expect("JSON report");
    let species = v["species"].as_u64().expect("species count");
    let rank = v["rank"].as_u64().expect("rank");
    let laws = v["conservation_laws"].as_array().expect("laws").len() as u64;
    assert_eq!(laws, species - rank, "{tag}: laws = species − rank");
    v
}

/// 10,000 inert species (species in no reaction): each is its own conservation law and stays
/// out of the exact matrices, so `check` is quick and small (release: about 0.03 s, 16 MiB).
#[test]
fn ten_thousand_inert_species_are_checked_in_bounded_memory() {
    check_within("inert-species", &many_inert_species(10_000), 60.0, 1024.0);
}

/// 2,000 reacting species in one reaction, and a 1,000-species chain: bounded.
#[test]
fn two_thousand_reacting_species_are_checked_in_bounded_memory() {
    check_within("many-products", &many_products(2_000), 60.0, 1024.0);
    check_within("chain", &chain(1_000), 60.0, 1024.0);
}

/// One reaction with 10,000 products (a 200 kB file): the exact analysis keeps the
/// stoichiometric matrix and every conservation law sparse, so memory follows the non-zeros
/// (it took about 3 GB while the laws were dense vectors).
#[test]
fn ten_thousand_reacting_species_fit_in_a_gigabyte() {
    let v = check_within("many-products-10k", &many_products(10_000), 60.0, 1024.0);
    assert_eq!(v["rank"], 1);
}

/// A chain of 10,000 species and 9,999 reactions: checked within 1 GiB (a dense exact
/// species × reactions matrix would need several GB).
#[test]
fn ten_thousand_reaction_chain_fits_in_a_gigabyte() {
    let v = check_within("chain-10k", &chain(10_000), 120.0, 1024.0);
    // A chain S0 -> ... -> S9999: every step independent, one law (the total amount).
    assert_eq!(v["rank"], 9_999);
    let law = v["conservation_laws"][0].as_object().expect("one law");
    assert_eq!(law.len(), 10_000);
    assert!(law.values().all(|c| c == "1"));
}

/// 10,000 nested `[` (and `{`): refused with exit 2, no stack overflow, no report.
#[test]
fn deeply_nested_yaml_is_refused() {
    for (tag, open) in [("nested-seq", "["), ("nested-map", "{a: ")] {
        for text in [
            open.repeat(10_000),
            format!("species: {}", open.repeat(10_000)),
        ] {
            let path = write_temp(tag, &text);
            let w = run_watched(&["check", path.to_str().expect("UTF-8")], 30.0, 512.0);
            remove(&path);
            assert_eq!(w.killed, None, "{tag}");
            assert_eq!(w.run.code, 2, "{tag}: stderr {}", w.run.stderr);
            assert!(w.run.stdout.is_empty(), "{tag}");
            assert!(
                w.run.stderr.starts_with("error: "),
                "{tag}: {}",
                w.run.stderr
            );
            assert!(
                !w.run.stderr.contains("panicked"),
                "{tag}: {}",
                w.run.stderr
            );
            assert!(
                !w.run.stderr.contains("overflow"),
                "{tag}: {}",
                w.run.stderr
            );
        }
    }
    // Nested block sequences, one level per line.
    let mut text = String::from("species:\n");
    for d in 0..5_000 {
        text.push_str(&" ".repeat(d));
        text.push_str("-\n");
    }
    let path = write_temp("nested-block", &text);
    let w = run_watched(&["check", path.to_str().expect("UTF-8")], 30.0, 512.0);
    remove(&path);
    assert_eq!(w.killed, None);
    assert_eq!(w.run.code, 2, "stderr {}", w.run.stderr);
    assert!(!w.run.stderr.contains("panicked"), "{}", w.run.stderr);
}

/// A billion-point sweep (one axis, or a grid whose product overflows usize) is refused at
/// once with exit 2, before any point is solved.
#[test]
fn billion_point_sweep_is_refused_quickly() {
    let path = write_temp("sweep", STUDY);
    let p = path.to_str().expect("UTF-8");
    let cases: [&[&str]; 3] = [
        &["sweep", p, "--vary", "reactor.volume=1 L:2 L:1000000000"],
        &[
            "sweep",
            p,
            "--vary",
            "reactor.volume=1 L:2 L:1000000",
            "--vary",
            "feed.T=300 K:310 K:1000000",
            "--vary",
            "feed.T=300 K:310 K:1000000",
            "--vary",
            "feed.T=300 K:310 K:1000000",
        ],
        &[
            "sweep",
            p,
            "--vary",
            "reactor.volume=1 L:2 L:99999999999999999999",
        ],
    ];
    for args in cases {
        let w = run_watched(args, 10.0, 512.0);
        println!(
            "{:?} | exit {} | {:.3} s",
            &args[3..],
            w.run.code,
            w.seconds
        );
        assert_eq!(w.killed, None, "{args:?}");
        assert_eq!(w.run.code, 2, "{args:?}: {}", w.run.stderr);
        assert!(w.run.stdout.is_empty(), "{args:?}");
        assert!(w.run.stderr.starts_with("error: "), "{}", w.run.stderr);
        assert!(w.seconds < 5.0, "{args:?} took {:.1} s", w.seconds);
    }
    remove(&path);
}

/// A unit of 1,000,000 nested parentheses and a 1,000,000-character species name: refused with
/// exit 2, and the message stays short (it once echoed the whole 1 MB text).
#[test]
fn long_offending_text_is_cut_in_messages() {
    let base = std::fs::read_to_string(root().join("networks").join("diene_hydrogenation.yaml"))
        .expect("bundled study");
    assert!(base.contains("  T: 320 K\n"));
    let deep_unit = base.replace(
        "  T: 320 K\n",
        &format!("  T: 320 {}K\n", "(".repeat(1_000_000)),
    );
    let long_name = format!("{}\n  {}: {{}}\n", base.trim_end(), "Q".repeat(1_000_000));
    for (tag, text) in [("deep-unit", deep_unit), ("long-key", long_name)] {
        let path = write_temp(tag, &text);
        let run = rxnet(&["check", path.to_str().expect("UTF-8")]);
        remove(&path);
        assert_eq!(
            run.code,
            2,
            "{tag}: {}",
            &run.stderr[..run.stderr.len().min(300)]
        );
        assert!(run.stderr.starts_with("error: "), "{tag}");
        assert!(
            run.stderr.len() < 4_000,
            "{tag}: {} bytes of message",
            run.stderr.len()
        );
    }
}
