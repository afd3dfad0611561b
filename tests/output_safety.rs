//! A trusted command line's manners, through the binary: every write is checked, a reader that
//! quit ends the command quietly, output files never replace what is not a regular file, and
//! temporary files never stay behind; studies are read with a byte cap from any kind of file
//! or from standard input, with or without a UTF-8 byte-order mark; names are ASCII.

mod common;

use common::{network, rxnet, write_temp};
use std::io::{Read, Write};
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};

const STUDY: &str = "name: output safety (test values)
phase: liquid
species: {A: null, B: null, C: null}
reactions:
  - {id: r1, stoich: A -> B, rate: {k: 0.2 1/s}}
  - {id: r2, stoich: B -> C, rate: {k: 0.05 1/s}}
feed: {T: 300 K, volumetric: 1 L/s, concentrations: {A: 1 mol/L}}
reactor: {type: pfr, volume: 10 L}
key: A
desired: B
";

fn bin() -> Command {
    Command::new(env!("CARGO_BIN_EXE_rxnet"))
}

/// A fresh empty directory for one test.
fn scratch(tag: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("rxnet-test-{}-{tag}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).expect("a scratch directory");
    d
}

/// Files in `dir` whose name marks them as our temporary files.
fn temporaries(dir: &Path) -> Vec<String> {
    std::fs::read_dir(dir)
        .expect("list the directory")
        .filter_map(|e| e.ok())
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .filter(|n| n.starts_with(".rxnet-") && n.ends_with(".tmp"))
        .collect()
}

fn s(p: &Path) -> &str {
    p.to_str().expect("UTF-8 path")
}

// ---------------------------------------------------------------------------------------
// Standard output
// ---------------------------------------------------------------------------------------

#[test]
fn a_full_disk_on_standard_output_fails_every_command() {
    let study = write_temp("full", STUDY);
    let f = s(&study);
    let commands: Vec<Vec<&str>> = vec![
        vec!["check", f],
        vec!["table", f],
        vec!["run", f],
        vec!["run", f, "--format", "csv"],
        vec!["generate", "--species", "5", "--reactions", "5"],
        vec!["optimize", f, "--maximize", "B", "--min-conversion", "0.5"],
        vec!["sweep", f, "--vary", "reactor.volume=1 L:10 L:3"],
        vec!["compare", f],
    ];
    for args in &commands {
        let full = std::fs::OpenOptions::new()
            .write(true)
            .open("/dev/full")
            .expect("/dev/full (Linux)");
        let out = bin().args(args).stdout(full).output().expect("run rxnet");
        let stderr = String::from_utf8_lossy(&out.stderr);
        assert_eq!(out.status.code(), Some(1), "{args:?}: {stderr}");
        assert!(
            stderr.contains("cannot write to standard output"),
            "{args:?}: {stderr}"
        );
    }
    let _ = std::fs::remove_file(&study);
}

#[test]
fn a_full_disk_on_standard_error_is_exit_1_not_a_panic() {
    // The error message cannot be written: exit 1 (the messages had nowhere to go), never
    // the 101 of a panic.
    let full = std::fs::OpenOptions::new()
        .write(true)
        .open("/dev/full")
        .expect("/dev/full (Linux)");
    let out = bin()
        .args(["check", "/no/such/study.yaml"])
        .stderr(full)
        .output()
        .expect("run rxnet");
    assert_eq!(out.status.code(), Some(1));
}

#[test]
fn a_reader_that_quits_ends_the_command_quietly() {
    // `rxnet generate ... | head -c 100`: megabytes of output, the reader takes 100 bytes and
    // closes the pipe. The write fails with a broken pipe: exit 0, nothing on stderr.
    let mut child = bin()
        .args(["generate", "--species", "2000", "--reactions", "6000"])
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("start rxnet");
    let mut head = [0u8; 100];
    child
        .stdout
        .as_mut()
        .expect("piped")
        .read_exact(&mut head)
        .expect("the first bytes");
    drop(child.stdout.take());
    let out = child.wait_with_output().expect("wait");
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(0), "{stderr}");
    assert!(stderr.is_empty(), "quiet: {stderr}");
}

// ---------------------------------------------------------------------------------------
// Output files
// ---------------------------------------------------------------------------------------

#[test]
fn a_directory_or_a_missing_directory_is_refused_before_the_work() {
    let dir = scratch("outdir");
    let study = write_temp("outdir", STUDY);
    for flag in ["--profile", "--plot"] {
        let r = rxnet(&["run", s(&study), flag, s(&dir)]);
        assert_eq!(r.code, 2, "{flag}: {}", r.stderr);
        assert!(r.stderr.contains("is a directory"), "{}", r.stderr);
        assert!(r.stdout.is_empty(), "no result printed: {}", r.stdout);
        let missing = dir.join("no/such/dir/p.csv");
        let r = rxnet(&["run", s(&study), flag, s(&missing)]);
        assert_eq!(r.code, 2, "{}", r.stderr);
        assert!(r.stderr.contains("does not exist"), "{}", r.stderr);
    }
    for flag in ["--out", "--plot"] {
        let r = rxnet(&[
            "sweep",
            s(&study),
            "--vary",
            "reactor.volume=1 L:10 L:3",
            flag,
            s(&dir),
        ]);
        assert_eq!(r.code, 2, "sweep {flag}: {}", r.stderr);
        assert!(r.stderr.contains("is a directory"), "{}", r.stderr);
    }
    assert!(temporaries(&dir).is_empty(), "{:?}", temporaries(&dir));
    let _ = std::fs::remove_file(&study);
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn devices_are_written_in_place_never_replaced() {
    let study = write_temp("devnull", STUDY);
    let r = rxnet(&[
        "run",
        s(&study),
        "--profile",
        "/dev/null",
        "--plot",
        "/dev/null",
    ]);
    assert_eq!(r.code, 0, "{}", r.stderr);
    use std::os::unix::fs::FileTypeExt;
    let m = std::fs::metadata("/dev/null").expect("/dev/null");
    assert!(
        m.file_type().is_char_device(),
        "/dev/null is still a device"
    );
    let r = rxnet(&[
        "sweep",
        s(&study),
        "--vary",
        "reactor.volume=1 L:10 L:3",
        "--out",
        "/dev/null",
    ]);
    assert_eq!(r.code, 0, "sweep --out /dev/null: {}", r.stderr);
    let m = std::fs::metadata("/dev/null").expect("/dev/null");
    assert!(m.file_type().is_char_device(), "still a device after sweep");
    // A full device: the write fails, exit 1 with a message.
    let r = rxnet(&["run", s(&study), "--profile", "/dev/full"]);
    assert_eq!(r.code, 1, "{}", r.stderr);
    assert!(r.stderr.contains("cannot write /dev/full"), "{}", r.stderr);
    // /dev/stdout when standard output is a pipe: the profile goes down the pipe.
    let r = rxnet(&[
        "run",
        s(&study),
        "--profile",
        "/dev/stdout",
        "--format",
        "json",
    ]);
    assert_eq!(r.code, 0, "{}", r.stderr);
    assert!(r.stdout.starts_with("V [m3],A [mol/s]"), "{}", r.stdout);
    // /dev/stdout when standard output is a file opened by the shell (`> out.txt`): the
    // profile first, then the report, neither overwriting the other.
    let dir = scratch("stdoutfile");
    let out_path = dir.join("out.txt");
    let out_file = std::fs::File::create(&out_path).expect("create");
    let status = bin()
        .args([
            "run",
            s(&study),
            "--profile",
            "/dev/stdout",
            "--points",
            "3",
        ])
        .stdout(out_file)
        .status()
        .expect("run rxnet");
    assert_eq!(status.code(), Some(0));
    let text = std::fs::read_to_string(&out_path).expect("read");
    assert!(text.starts_with("V [m3],A [mol/s]"), "{text}");
    assert_eq!(
        text.lines().nth(3).map(|l| l.split(',').count()),
        Some(6),
        "{text}"
    );
    assert!(text.contains("conversion of A"), "{text}");
    let _ = std::fs::remove_dir_all(&dir);
    let _ = std::fs::remove_file(&study);
}

#[test]
fn a_fifo_is_written_in_place() {
    let dir = scratch("fifo");
    let fifo = dir.join("profile.csv");
    let ok = Command::new("mkfifo").arg(&fifo).status().expect("mkfifo");
    assert!(ok.success());
    let reader = {
        let fifo = fifo.clone();
        std::thread::spawn(move || std::fs::read_to_string(fifo).expect("read the FIFO"))
    };
    let study = write_temp("fifo", STUDY);
    let r = rxnet(&["run", s(&study), "--profile", s(&fifo), "--points", "4"]);
    assert_eq!(r.code, 0, "{}", r.stderr);
    let got = reader.join().expect("the reader");
    assert_eq!(got.lines().count(), 5, "header and 4 rows: {got}");
    use std::os::unix::fs::FileTypeExt;
    let m = std::fs::symlink_metadata(&fifo).expect("the FIFO");
    assert!(m.file_type().is_fifo(), "still a FIFO");
    assert!(temporaries(&dir).is_empty());
    let _ = std::fs::remove_file(&study);
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn regular_files_are_replaced_atomically_keeping_links_and_permissions() {
    use std::os::unix::fs::PermissionsExt;
    let dir = scratch("regular");
    let study = write_temp("regular", STUDY);
    // A symbolic link to a regular file stays a link; its target gets the profile.
    let target = dir.join("target.csv");
    std::fs::write(&target, "old\n").expect("write");
    std::fs::set_permissions(&target, std::fs::Permissions::from_mode(0o640)).expect("chmod");
    let link = dir.join("link.csv");
    std::os::unix::fs::symlink("target.csv", &link).expect("symlink");
    let r = rxnet(&["run", s(&study), "--profile", s(&link), "--points", "3"]);
    assert_eq!(r.code, 0, "{}", r.stderr);
    let lm = std::fs::symlink_metadata(&link).expect("link");
    assert!(lm.file_type().is_symlink(), "the link is still a link");
    let text = std::fs::read_to_string(&target).expect("target");
    assert!(text.starts_with("V [m3],A [mol/s]"), "{text}");
    let mode = std::fs::metadata(&target)
        .expect("target")
        .permissions()
        .mode();
    assert_eq!(
        mode & 0o777,
        0o640,
        "the replaced file keeps its permissions"
    );
    // A dangling link: the file it names is made.
    let dangling = dir.join("dangling.csv");
    std::os::unix::fs::symlink("made.csv", &dangling).expect("symlink");
    let r = rxnet(&["run", s(&study), "--profile", s(&dangling)]);
    assert_eq!(r.code, 0, "{}", r.stderr);
    assert!(dir.join("made.csv").is_file());
    // A name of 250 characters (the limit is 255 bytes): the temporary name is short.
    let long = dir.join(format!("{}.csv", "p".repeat(246)));
    let r = rxnet(&["run", s(&study), "--profile", s(&long)]);
    assert_eq!(r.code, 0, "{}", r.stderr);
    assert!(long.is_file());
    assert!(temporaries(&dir).is_empty(), "{:?}", temporaries(&dir));
    let _ = std::fs::remove_file(&study);
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn a_path_the_user_may_not_write_is_refused() {
    use std::os::unix::fs::PermissionsExt;
    let dir = scratch("readonly");
    let file = dir.join("kept.csv");
    std::fs::write(&file, "kept\n").expect("write");
    std::fs::set_permissions(&file, std::fs::Permissions::from_mode(0o444)).expect("chmod");
    // The superuser may write anything: then there is nothing to refuse.
    if std::fs::OpenOptions::new().write(true).open(&file).is_ok() {
        println!("skipped: running with the right to write read-only files (superuser)");
        std::fs::set_permissions(&file, std::fs::Permissions::from_mode(0o644)).expect("chmod");
        let _ = std::fs::remove_dir_all(&dir);
        return;
    }
    let study = write_temp("readonly", STUDY);
    let r = rxnet(&["run", s(&study), "--profile", s(&file)]);
    assert_eq!(r.code, 2, "{}", r.stderr);
    assert!(r.stderr.contains("permission denied"), "{}", r.stderr);
    assert_eq!(std::fs::read_to_string(&file).expect("read"), "kept\n");
    let _ = std::fs::remove_file(&study);
    std::fs::set_permissions(&file, std::fs::Permissions::from_mode(0o644)).expect("chmod");
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn an_interrupt_removes_the_temporary_file_and_keeps_the_old_one() {
    // A generated network that takes seconds to solve; the profile's temporary file exists
    // from the start (the output is opened before the work). SIGINT and SIGTERM end the run
    // with 128 + the signal number, the temporary file removed, the old file untouched.
    let dir = scratch("interrupt");
    let big = dir.join("big.yaml");
    let r = rxnet(&["generate", "--species", "3000", "--reactions", "10000"]);
    assert_eq!(r.code, 0, "{}", r.stderr);
    std::fs::write(&big, &r.stdout).expect("write the study");
    let dest = dir.join("profile.csv");
    for (signal, code) in [("INT", 130), ("TERM", 143)] {
        std::fs::write(&dest, "old\n").expect("write");
        let mut child = bin()
            .args(["run", s(&big), "--profile", s(&dest)])
            .stdout(Stdio::null())
            .stderr(Stdio::null())
            .spawn()
            .expect("start rxnet");
        let t0 = std::time::Instant::now();
        while temporaries(&dir).is_empty() {
            assert!(
                t0.elapsed().as_secs() < 60,
                "the temporary file never appeared"
            );
            assert!(
                child.try_wait().expect("poll").is_none(),
                "the run ended before its output was opened"
            );
            std::thread::sleep(std::time::Duration::from_millis(5));
        }
        let killed = Command::new("kill")
            .args([&format!("-{signal}"), &child.id().to_string()])
            .status()
            .expect("kill");
        assert!(killed.success());
        let status = child.wait().expect("wait");
        assert_eq!(status.code(), Some(code), "SIG{signal}");
        assert!(temporaries(&dir).is_empty(), "{:?}", temporaries(&dir));
        assert_eq!(std::fs::read_to_string(&dest).expect("read"), "old\n");
    }
    let _ = std::fs::remove_dir_all(&dir);
}

// ---------------------------------------------------------------------------------------
// Input
// ---------------------------------------------------------------------------------------

/// Run rxnet with `input` on standard input.
fn with_stdin(args: &[&str], input: Vec<u8>) -> (i32, String, String) {
    let mut child = bin()
        .args(args)
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("start rxnet");
    let mut stdin = child.stdin.take().expect("piped");
    let writer = std::thread::spawn(move || {
        let _ = stdin.write_all(&input);
    });
    let out = child.wait_with_output().expect("wait");
    let _ = writer.join();
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

#[test]
fn a_dash_reads_the_study_from_standard_input_in_every_command() {
    let commands: Vec<Vec<&str>> = vec![
        vec!["check", "-"],
        vec!["table", "-"],
        vec!["run", "-"],
        vec![
            "optimize",
            "-",
            "--maximize",
            "B",
            "--min-conversion",
            "0.5",
        ],
        vec!["sweep", "-", "--vary", "reactor.volume=1 L:10 L:3"],
        vec!["compare", "-"],
    ];
    for args in &commands {
        let (code, stdout, stderr) = with_stdin(args, STUDY.as_bytes().to_vec());
        assert_eq!(code, 0, "{args:?}: {stderr}");
        assert!(!stdout.is_empty(), "{args:?}");
    }
    // Standard input can be read once.
    let (code, _, stderr) = with_stdin(&["compare", "-", "-"], STUDY.as_bytes().to_vec());
    assert_ne!(code, 0);
    assert!(stderr.contains("already read"), "{stderr}");
    // Empty standard input is named as such.
    let (code, _, stderr) = with_stdin(&["check", "-"], vec![]);
    assert_eq!(code, 2, "{stderr}");
    assert!(stderr.contains("standard input is empty"), "{stderr}");
}

#[test]
fn every_kind_of_input_has_the_byte_cap() {
    // /dev/zero never ends: read to the cap and refused.
    let r = rxnet(&["check", "/dev/zero"]);
    assert_eq!(r.code, 2, "{}", r.stderr);
    assert!(r.stderr.contains("at most 67108864 bytes"), "{}", r.stderr);
    // An endless pipe into `-`.
    let mut child = bin()
        .args(["check", "-"])
        .stdin(Stdio::piped())
        .stdout(Stdio::null())
        .stderr(Stdio::piped())
        .spawn()
        .expect("start rxnet");
    let mut stdin = child.stdin.take().expect("piped");
    let writer = std::thread::spawn(move || {
        let block = vec![b'#'; 1 << 20];
        while stdin.write_all(&block).is_ok() {}
    });
    let out = child.wait_with_output().expect("wait");
    writer
        .join()
        .expect("the writer ends when the reader is gone");
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(2), "{stderr}");
    assert!(stderr.contains("at most 67108864 bytes"), "{stderr}");
    // A directory.
    let dir = scratch("indir");
    let r = rxnet(&["check", s(&dir)]);
    assert_eq!(r.code, 2, "{}", r.stderr);
    assert!(r.stderr.contains("directory"), "{}", r.stderr);
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn a_utf8_byte_order_mark_is_accepted() {
    let mut bytes = vec![0xEF, 0xBB, 0xBF];
    bytes.extend_from_slice(STUDY.as_bytes());
    let (code, _, stderr) = with_stdin(&["check", "-"], bytes.clone());
    assert_eq!(code, 0, "{stderr}");
    let path = write_temp("bom", "");
    std::fs::write(&path, &bytes).expect("write");
    let r = rxnet(&["run", s(&path)]);
    assert_eq!(r.code, 0, "{}", r.stderr);
    let _ = std::fs::remove_file(&path);
    // UTF-16 is named.
    let (code, _, stderr) = with_stdin(&["check", "-"], vec![0xFF, 0xFE, b'n', 0]);
    assert_eq!(code, 2);
    assert!(stderr.contains("UTF-16"), "{stderr}");
}

#[test]
fn names_outside_ascii_are_refused_saying_ascii_letters() {
    for (tag, study) in [
        (
            "species",
            STUDY
                .replace("B: null", "β: null")
                .replace("-> B", "-> β")
                .replace("B ->", "β ->")
                .replace("desired: B", "desired: β"),
        ),
        ("equation", STUDY.replace("A -> B", "α -> B")),
        ("id", STUDY.replace("id: r1", "id: rα")),
    ] {
        let (code, _, stderr) = with_stdin(&["check", "-"], study.into_bytes());
        assert_eq!(code, 2, "{tag}: {stderr}");
        assert!(stderr.contains("ASCII letters"), "{tag}: {stderr}");
    }
}

#[test]
fn bundled_networks_still_load_from_standard_input() {
    let text = std::fs::read(network("ethylene_epoxidation.yaml")).expect("bundled network");
    let (code, stdout, stderr) = with_stdin(&["run", "-", "--format", "json"], text);
    assert_eq!(code, 0, "{stderr}");
    assert!(stdout.contains("\"ergun_alpha\""), "{stdout}");
}
