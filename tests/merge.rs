//! `rxnet sweep --shard K/N` provenance and `rxnet merge`: the merged shards are the unsharded
//! sweep byte for byte, and every set of files that is not the N shards of one sweep, each
//! point once, is refused with a message that names the file.

mod common;
use common::{gas_batch, network, rxnet, write_temp};
use std::path::PathBuf;

/// A scratch directory for one test, removed at the end.
struct Scratch(PathBuf);

impl Scratch {
    fn new(tag: &str) -> Scratch {
        let nanos = std::time::SystemTime::now()
            .duration_since(std::time::UNIX_EPOCH)
            .map(|d| d.as_nanos())
            .unwrap_or(0);
        let dir =
            std::env::temp_dir().join(format!("rxnet-merge-{}-{tag}-{nanos}", std::process::id()));
        std::fs::create_dir_all(&dir).expect("make a scratch directory");
        Scratch(dir)
    }

    fn path(&self, name: &str) -> String {
        self.0.join(name).to_str().unwrap().to_string()
    }

    /// The names in the directory (to see that nothing was left behind).
    fn names(&self) -> Vec<String> {
        let mut v: Vec<String> = std::fs::read_dir(&self.0)
            .unwrap()
            .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
            .collect();
        v.sort();
        v
    }
}

impl Drop for Scratch {
    fn drop(&mut self) {
        let _ = std::fs::remove_dir_all(&self.0);
    }
}

fn diene() -> String {
    network("diene_hydrogenation.yaml")
        .to_str()
        .unwrap()
        .to_string()
}

/// Two varied inputs, 7 × 3 = 21 points.
const GRID2: [&str; 4] = [
    "--vary",
    "reactor.volume=1 L:100 L:7",
    "--vary",
    "feed.T=300 K:340 K:3",
];

/// `rxnet sweep STUDY ARGS... [--format json] --out OUT`, which must succeed.
fn sweep_to(study: &str, args: &[&str], json: bool, out: &str) {
    let mut all = vec!["sweep", study];
    all.extend_from_slice(args);
    if json {
        all.extend(["--format", "json"]);
    }
    all.extend(["--out", out]);
    let run = rxnet(&all);
    assert_eq!(run.code, 0, "{all:?}: {}", run.stderr);
}

/// The N shards of a sweep written into `dir` as `s{K}.csv` (or `.json`), in order K = 1..N.
fn write_shards(dir: &Scratch, study: &str, args: &[&str], n: usize, json: bool) -> Vec<String> {
    let ext = if json { "json" } else { "csv" };
    (1..=n)
        .map(|k| {
            let out = dir.path(&format!("s{k}.{ext}"));
            let shard = format!("{k}/{n}");
            let mut a = args.to_vec();
            a.extend(["--shard", &shard]);
            sweep_to(study, &a, json, &out);
            out
        })
        .collect()
}

fn merge(inputs: &[String], out: &str) -> common::Run {
    let mut all = vec!["merge"];
    all.extend(inputs.iter().map(String::as_str));
    all.extend(["--out", out]);
    rxnet(&all)
}

/// Merge the shards (given in a scrambled order) and compare with the unsharded file.
fn assert_merges_to_whole(study: &str, args: &[&str], json: bool, shard_counts: &[usize]) {
    let dir = Scratch::new(if json { "whole-json" } else { "whole-csv" });
    let whole = dir.path("whole");
    sweep_to(study, args, json, &whole);
    let want = std::fs::read(&whole).unwrap();
    for &n in shard_counts {
        let mut shards = write_shards(&dir, study, args, n, json);
        // Order on the command line does not matter: last first, then the rest.
        shards.rotate_right(1);
        let out = dir.path(&format!("merged-{n}"));
        let run = merge(&shards, &out);
        assert_eq!(run.code, 0, "{n} shards: {}", run.stderr);
        let got = std::fs::read(&out).unwrap();
        assert!(
            got == want,
            "{n} shards merged differ from the unsharded sweep:\n{}\n---\n{}",
            String::from_utf8_lossy(&got),
            String::from_utf8_lossy(&want)
        );
        for s in &shards {
            let _ = std::fs::remove_file(s);
        }
    }
}

#[test]
fn merged_csv_shards_are_the_unsharded_csv_byte_for_byte() {
    // One shard, several, a count that does not divide the points, one point per shard, and
    // more shards than points (the shards past the last point hold no row).
    assert_merges_to_whole(&diene(), &GRID2, false, &[1, 2, 4, 7, 21, 30]);
    assert_merges_to_whole(
        &diene(),
        &["--vary", "reactor.volume=1 L:100 L:10"],
        false,
        &[3],
    );
}

#[test]
fn merged_json_shards_are_the_unsharded_json_byte_for_byte() {
    assert_merges_to_whole(&diene(), &GRID2, true, &[1, 4, 21, 30]);
}

const FAILING: [&str; 4] = [
    "--vary",
    "feed.T=397 K:403 K:3",
    "--vary",
    "feed.P=0.9925 bar:1.0075 bar:3",
];

#[test]
fn failed_points_and_their_count_merge_to_the_unsharded_file() {
    let study = write_temp("merge-fail", &gas_batch());
    let s = study.to_str().unwrap();
    // The unsharded sweep has 2 failed points of 9 and says so in its last line.
    let whole = rxnet(&["sweep", s, FAILING[0], FAILING[1], FAILING[2], FAILING[3]]);
    assert_eq!(whole.code, 0, "{}", whole.stderr);
    assert!(
        whole.stdout.ends_with("# failed: 2 of 9 points\n"),
        "{}",
        whole.stdout
    );
    // Shards with a failed point carry their own count; the merge sums them. 2 shards put
    // both failed points (2 and 6) in shard 1; 4 shards put them in shards 3 (2 and 6).
    assert_merges_to_whole(s, &FAILING, false, &[2, 4, 9]);
    assert_merges_to_whole(s, &FAILING, true, &[2, 4]);
    // A shard whose every point failed (shard 3 of 9 holds point 2 alone) still ends 0: the
    // merge judges the whole sweep, so a job array's merge is not held back by it.
    let part = rxnet(&[
        "sweep", s, FAILING[0], FAILING[1], FAILING[2], FAILING[3], "--shard", "3/9",
    ]);
    assert_eq!(part.code, 0, "{}", part.stderr);
    assert!(
        part.stderr
            .contains("every point of this shard failed (1 of 1)"),
        "{}",
        part.stderr
    );
    // The merge notes the failed points as the sweep does.
    let dir = Scratch::new("fail-note");
    let shards = write_shards(&dir, s, &FAILING, 3, false);
    let run = merge(&shards, &dir.path("m.csv"));
    assert_eq!(run.code, 0, "{}", run.stderr);
    assert!(
        run.stderr.contains("2 of 9 points failed"),
        "{}",
        run.stderr
    );
    let _ = std::fs::remove_file(&study);
}

#[test]
fn a_shard_carries_its_provenance_and_the_unsharded_output_does_not() {
    let dir = Scratch::new("provenance");
    let study = diene();
    let shards = write_shards(&dir, &study, &GRID2, 4, false);
    let text = std::fs::read_to_string(&shards[2]).unwrap();
    let lines: Vec<&str> = text.lines().collect();
    assert_eq!(lines[0], "# rxnet_shard: 3/4");
    assert_eq!(
        lines[1],
        format!("# rxnet_version: {}", env!("CARGO_PKG_VERSION"))
    );
    let hash = lines[2].strip_prefix("# study_sha256: ").unwrap();
    assert!(hash.len() == 64 && hash.bytes().all(|b| b.is_ascii_hexdigit()));
    assert_eq!(lines[3], "# points: 21");
    // Shard 3 of 4 holds the points p with p mod 4 = 2, with no column header.
    let points: Vec<usize> = lines[4..]
        .iter()
        .map(|l| l.split(',').next().unwrap().parse().unwrap())
        .collect();
    assert_eq!(points, vec![2, 6, 10, 14, 18]);
    // The unsharded CSV begins with its header, as before shards had provenance.
    let whole = rxnet(&["sweep", &study, GRID2[0], GRID2[1], GRID2[2], GRID2[3]]);
    assert!(whole.stdout.starts_with("point,"), "{}", whole.stdout);
    assert!(!whole.stdout.contains('#'), "{}", whole.stdout);
    let js = rxnet(&[
        "sweep", &study, GRID2[0], GRID2[1], GRID2[2], GRID2[3], "--format", "json",
    ]);
    assert!(js.stdout.starts_with("[\n  {"), "{}", js.stdout);
    // A JSON shard is one JSON document with the same provenance.
    let jshards = write_shards(&dir, &study, &GRID2, 4, true);
    let v: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&jshards[2]).unwrap()).unwrap();
    assert_eq!(v["rxnet_shard"], "3/4");
    assert_eq!(v["rxnet_version"], env!("CARGO_PKG_VERSION"));
    assert_eq!(v["points"], 21);
    assert_eq!(v["rows"].as_array().unwrap().len(), 5);

    // Every argument that changes a row changes the hash; the shard number does not.
    let hash_of = |args: &[&str], study: &str| -> String {
        let mut all = vec!["sweep", study];
        all.extend_from_slice(args);
        let run = rxnet(&all);
        assert_eq!(run.code, 0, "{all:?}: {}", run.stderr);
        run.stdout.lines().nth(2).unwrap().to_string()
    };
    let base = hash_of(&[GRID2[0], GRID2[1], "--shard", "1/4"], &study);
    assert_eq!(
        base,
        hash_of(&[GRID2[0], GRID2[1], "--shard", "2/4"], &study)
    );
    let edited = write_temp(
        "merge-edited",
        &(std::fs::read_to_string(&study).unwrap() + "\n# edited\n"),
    );
    let same_text = write_temp("merge-same-text", &std::fs::read_to_string(&study).unwrap());
    for (what, args, file) in [
        (
            "--vary",
            vec!["--vary", "reactor.volume=1 L:100 L:8"],
            study.clone(),
        ),
        (
            "--set",
            vec![GRID2[0], GRID2[1], "--set", "feed.T=310 K"],
            study.clone(),
        ),
        (
            "--rtol",
            vec![GRID2[0], GRID2[1], "--rtol", "1e-6"],
            study.clone(),
        ),
        (
            "--steady-state",
            vec![GRID2[0], GRID2[1], "--steady-state", "highest"],
            study.clone(),
        ),
        (
            "--format",
            vec![GRID2[0], GRID2[1], "--format", "json"],
            study.clone(),
        ),
        (
            "study text",
            vec![GRID2[0], GRID2[1]],
            edited.to_str().unwrap().to_string(),
        ),
        // The same text by another path: a failed point's error quotes the path.
        (
            "study path",
            vec![GRID2[0], GRID2[1]],
            same_text.to_str().unwrap().to_string(),
        ),
    ] {
        let mut a = args.clone();
        a.extend(["--shard", "1/4"]);
        let h = if what == "--format" {
            let mut all = vec!["sweep", file.as_str()];
            all.extend_from_slice(&a);
            let run = rxnet(&all);
            let v: serde_json::Value = serde_json::from_str(&run.stdout).unwrap();
            format!("# study_sha256: {}", v["study_sha256"].as_str().unwrap())
        } else {
            hash_of(&a, &file)
        };
        assert_ne!(h, base, "{what} left the study hash as it was");
    }
    let _ = std::fs::remove_file(&edited);
    let _ = std::fs::remove_file(&same_text);
}

/// Four CSV shards of the 21-point sweep, and the merge output path.
fn four_shards(tag: &str) -> (Scratch, Vec<String>, String) {
    let dir = Scratch::new(tag);
    let shards = write_shards(&dir, &diene(), &GRID2, 4, false);
    let out = dir.path("merged.csv");
    (dir, shards, out)
}

/// The merge must be refused with exit 2, a message containing every `needles`, and no
/// output file.
fn refused(inputs: &[String], out: &str, needles: &[&str]) -> String {
    let run = merge(inputs, out);
    assert_eq!(run.code, 2, "stderr: {}", run.stderr);
    for n in needles {
        assert!(
            run.stderr.contains(n),
            "`{n}` not in the message: {}",
            run.stderr
        );
    }
    assert!(!run.stderr.contains("panicked"), "{}", run.stderr);
    assert!(
        !std::path::Path::new(out).exists(),
        "a refused merge wrote {out}"
    );
    run.stderr
}

/// Rewrite a file line by line.
fn edit(path: &str, f: impl Fn(Vec<String>) -> Vec<String>) {
    let text = std::fs::read_to_string(path).unwrap();
    let lines = f(text.lines().map(String::from).collect());
    std::fs::write(path, lines.join("\n") + "\n").unwrap();
}

#[test]
fn a_missing_shard_is_refused() {
    let (_d, shards, out) = four_shards("missing");
    let given = vec![shards[0].clone(), shards[1].clone(), shards[3].clone()];
    refused(&given, &out, &["missing shard 3 of 4", "3 of 4 given"]);
}

#[test]
fn a_shard_given_twice_is_refused() {
    let (_d, shards, out) = four_shards("twice");
    let mut given = shards.clone();
    given.push(shards[1].clone());
    refused(&given, &out, &["shard 2 of 4 given twice", &shards[1]]);
    // A copy under another name is the same shard.
    let copy = format!("{}.copy", shards[2]);
    std::fs::copy(&shards[2], &copy).unwrap();
    let mut given = shards.clone();
    given.push(copy.clone());
    refused(
        &given,
        &out,
        &["shard 3 of 4 given twice", &shards[2], &copy],
    );
}

#[test]
fn shards_of_a_different_sweep_are_refused() {
    let (d, mut shards, out) = four_shards("hash");
    // Shard 2 run with a different tolerance: the same points, other digits.
    let other = d.path("other2.csv");
    let mut args = GRID2.to_vec();
    args.extend(["--rtol", "1e-6", "--shard", "2/4"]);
    sweep_to(&diene(), &args, false, &other);
    shards[1] = other.clone();
    refused(
        &shards,
        &out,
        &["study hash", &shards[0], &other, "different sweeps"],
    );
}

#[test]
fn shards_of_different_rxnet_versions_are_refused() {
    let (_d, shards, out) = four_shards("version");
    edit(&shards[2], |mut l| {
        l[1] = "# rxnet_version: 0.0.1".into();
        l
    });
    let version = env!("CARGO_PKG_VERSION");
    refused(
        &shards,
        &out,
        &[
            &format!("rxnet version {version} in {}", shards[0]),
            &format!("0.0.1 in {}", shards[2]),
        ],
    );
    // All from another version: this rxnet does not merge them.
    for s in &shards {
        edit(s, |mut l| {
            l[1] = "# rxnet_version: 0.0.1".into();
            l
        });
    }
    refused(&shards, &out, &["written by rxnet 0.0.1", &shards[0]]);
}

#[test]
fn shards_of_different_shard_counts_are_refused() {
    let (d, mut shards, out) = four_shards("count");
    let other = d.path("of3.csv");
    let mut args = GRID2.to_vec();
    args.extend(["--shard", "3/3"]);
    sweep_to(&diene(), &args, false, &other);
    shards.push(other.clone());
    refused(&shards, &out, &["shard 3 of 3", &other, "same N"]);
}

#[test]
fn a_truncated_shard_is_refused_naming_file_and_line() {
    // Shard 2 of 4 holds points 1, 5, 9, 13, 17 on lines 5 to 9.
    let (_d, shards, out) = four_shards("truncated");
    let s2 = shards[1].clone();
    let original = std::fs::read_to_string(&s2).unwrap();
    // The last row gone.
    edit(&s2, |mut l| {
        l.pop();
        l
    });
    refused(
        &shards,
        &out,
        &[
            &format!("{s2}: the file ends after point 13 at line 8"),
            "point 17 of shard 2 of 4 is missing",
        ],
    );
    // A row in the middle gone: point 9 (line 7).
    std::fs::write(&s2, &original).unwrap();
    edit(&s2, |mut l| {
        l.remove(6);
        l
    });
    refused(&shards, &out, &[&format!("{s2}:7: point 9 is missing")]);
    // Cut in the middle of a line.
    std::fs::write(&s2, &original[..original.len() - 20]).unwrap();
    refused(
        &shards,
        &out,
        &[&format!("{s2}:9: the last line has no newline")],
    );
    // The provenance alone.
    let head: Vec<&str> = original.lines().take(4).collect();
    std::fs::write(&s2, head.join("\n") + "\n").unwrap();
    refused(
        &shards,
        &out,
        &[
            &format!("{s2}: the file ends"),
            "point 1 of shard 2 of 4 is missing",
        ],
    );
}

#[test]
fn a_point_twice_or_in_the_wrong_shard_is_refused() {
    let (_d, shards, out) = four_shards("twice-point");
    let s2 = shards[1].clone();
    let original = std::fs::read_to_string(&s2).unwrap();
    // Point 5 (line 6) repeated on line 7.
    edit(&s2, |mut l| {
        let row = l[5].clone();
        l.insert(6, row);
        l
    });
    refused(
        &shards,
        &out,
        &[&format!("point 5 twice, in {s2}:6 and {s2}:7")],
    );
    // A row of shard 3 (point 2) in place of point 5.
    let row3 = std::fs::read_to_string(&shards[2])
        .unwrap()
        .lines()
        .nth(4)
        .unwrap()
        .to_string();
    std::fs::write(&s2, &original).unwrap();
    edit(&s2, |mut l| {
        l[5] = row3.clone();
        l
    });
    refused(
        &shards,
        &out,
        &[&format!("{s2}:6: point 2 belongs to shard 3 of 4")],
    );
}

#[test]
fn a_file_that_is_not_a_shard_is_refused() {
    let (d, shards, out) = four_shards("foreign");
    // The unsharded sweep itself.
    let whole = d.path("whole.csv");
    sweep_to(&diene(), &GRID2, false, &whole);
    let mut given = shards.clone();
    given[3] = whole.clone();
    refused(
        &given,
        &out,
        &[&format!("{whole}:1: not a shard of an rxnet sweep")],
    );
    // A study file.
    given[3] = diene();
    refused(&given, &out, &[&format!("{}:1: not a shard", diene())]);
    // A binary file without a newline is refused at its first 64 MiB, not read whole.
    let blob = d.path("blob.bin");
    std::fs::write(&blob, vec![b'x'; (64 << 20) + 10]).unwrap();
    given[3] = blob.clone();
    refused(&given, &out, &[&format!("{blob}:1: not a shard")]);
    let _ = std::fs::remove_file(&blob);
    // A file that does not exist.
    given[3] = d.path("nowhere.csv");
    refused(&given, &out, &[&format!("cannot read {}", given[3])]);
    // A JSON shard among CSV ones.
    let json = d.path("s4.json");
    let mut args = GRID2.to_vec();
    args.extend(["--shard", "4/4"]);
    sweep_to(&diene(), &args, true, &json);
    given[3] = json.clone();
    refused(
        &given,
        &out,
        &[&shards[0], "CSV shard", &json, "JSON shard"],
    );
}

#[test]
fn a_truncated_json_shard_is_refused() {
    let dir = Scratch::new("json-cut");
    let shards = write_shards(&dir, &diene(), &GRID2, 4, true);
    let out = dir.path("merged.json");
    let s3 = shards[2].clone();
    let text = std::fs::read_to_string(&s3).unwrap();
    // Without the closing `]` and `}`.
    let cut: Vec<&str> = text.lines().collect();
    std::fs::write(&s3, cut[..cut.len() - 2].join("\n") + "\n").unwrap();
    refused(&shards, &out, &[&s3, "the file ends where `  ]` belongs"]);
    // Cut inside a row.
    std::fs::write(&s3, cut[..20].join("\n") + "\n").unwrap();
    refused(&shards, &out, &[&s3, "the file ends inside the row"]);
}

#[test]
fn out_may_not_be_a_shard_and_an_existing_file_survives_a_refusal() {
    let (d, shards, out) = four_shards("out");
    let before = std::fs::read(&shards[0]).unwrap();
    let run = merge(&shards, &shards[0]);
    assert_eq!(run.code, 2, "{}", run.stderr);
    assert!(
        run.stderr.contains(&format!("is the shard {}", shards[0])),
        "{}",
        run.stderr
    );
    assert_eq!(
        std::fs::read(&shards[0]).unwrap(),
        before,
        "a shard was overwritten"
    );
    // An existing file at --out is left as it was when the merge is refused mid-way (a row
    // missing in the last shard), and no temporary file is left beside it.
    std::fs::write(&out, "kept\n").unwrap();
    let names = d.names();
    edit(&shards[3], |mut l| {
        l.pop();
        l
    });
    let run = merge(&shards, &out);
    assert_eq!(run.code, 2, "{}", run.stderr);
    assert!(run.stderr.contains(&shards[3]), "{}", run.stderr);
    assert_eq!(std::fs::read_to_string(&out).unwrap(), "kept\n");
    assert_eq!(d.names(), names, "the failed merge left a file behind");
}

#[test]
fn a_grid_beyond_one_run_is_refused_whole_and_runs_in_shards() {
    let study = diene();
    // 2,000,000 points: more than the 1,000,000 one run may have.
    let vary = ["--vary", "reactor.volume=1 L:100 L:2000000"];
    let whole = rxnet(&["sweep", &study, vary[0], vary[1]]);
    assert_eq!(whole.code, 2, "{}", whole.stderr);
    assert!(
        whole.stderr.contains("2000000 points") && whole.stderr.contains("2 or more shards"),
        "{}",
        whole.stderr
    );
    assert!(whole.stdout.is_empty());
    let one = rxnet(&["sweep", &study, vary[0], vary[1], "--shard", "1/1"]);
    assert_eq!(one.code, 2, "{}", one.stderr);
    assert!(one.stderr.contains("use N ≥ 2"), "{}", one.stderr);
    // Split a million ways, shard 1 holds points 0 and 1,000,000 (p mod N = 0).
    let part = rxnet(&["sweep", &study, vary[0], vary[1], "--shard", "1/1000000"]);
    assert_eq!(part.code, 0, "{}", part.stderr);
    let lines: Vec<&str> = part.stdout.lines().collect();
    assert_eq!(lines[0], "# rxnet_shard: 1/1000000");
    assert_eq!(lines[3], "# points: 2000000");
    assert!(lines[4].starts_with("point,"), "{}", lines[4]);
    let points: Vec<&str> = lines[5..]
        .iter()
        .map(|l| l.split(',').next().unwrap())
        .collect();
    assert_eq!(points, vec!["0", "1000000"]);
}
