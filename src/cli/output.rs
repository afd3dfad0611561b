//! Everything the binary writes: exit codes, standard output, JSON, files.
//!
//! Rules (each tested in `tests/output_safety.rs`):
//! - every write is checked: a full disk, a closed descriptor or any other write error on
//!   standard output or on a file ends the command with a message and exit code 1;
//! - a reader that quit (`rxnet ... | head`: the write fails with a broken pipe) is not an
//!   error of ours: the command ends quietly with the exit code it would have had;
//! - `--out`, `--profile` and `--plot` replace a regular file atomically (a temporary file in
//!   the same directory, then a rename), so an interrupted or failed run never leaves a
//!   half-written file that looks complete; a symbolic link to a regular file keeps pointing
//!   at its target, which is replaced;
//! - what is not a regular file is never replaced: a FIFO or a character device
//!   (`/dev/null`, `/dev/stdout`) is written in place, a directory, a block device or a socket
//!   is refused, and so is a path the user may not write; these are checked before the work
//!   ([`prepare`]) where possible;
//! - the temporary file has a short name (`.rxnet-<pid>-<n>.tmp`), so a long file name still
//!   works, and it is removed on every failure path and on SIGINT, SIGTERM or SIGHUP.

use std::fs::{File, OpenOptions, Permissions};
use std::io::Write;
use std::path::{Path, PathBuf};
use std::sync::Mutex;
use std::sync::atomic::{AtomicUsize, Ordering};

/// Exit code: the study file cannot be read or is invalid (also clap's usage errors).
pub const EXIT_INVALID: i32 = 2;
/// Exit code: the analysis found errors, a computation failed, or the output could not be
/// written.
pub const EXIT_FINDINGS: i32 = 1;

/// Print `text` to standard output and return the exit code to end with: `code` when the
/// text was written (or the reader quit: a broken pipe ends quietly), 1 with a message for any
/// other write failure (a full disk, a closed descriptor).
#[must_use = "the exit code says whether the output was written"]
pub fn emit(text: &str, code: i32) -> i32 {
    let mut out = std::io::stdout().lock();
    match out.write_all(text.as_bytes()).and_then(|_| out.flush()) {
        Ok(()) => code,
        Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => code,
        Err(e) => {
            eprintln!("error: cannot write to standard output: {e}");
            EXIT_FINDINGS
        }
    }
}

/// Append the safety caution of a text report (`rxnet::safety::caution`), if it has one, as its
/// last line.
pub fn push_caution(text: &mut String, caution: Option<&str>) {
    if let Some(c) = caution {
        text.push_str(c);
        text.push('\n');
    }
}

/// Run the command `f` and return its exit code; when standard error cannot be written (a
/// full disk: `2>/dev/full`), `eprintln!` panics, and that panic becomes exit code 1 (the
/// messages had nowhere to go) instead of the panic's 101. Any other panic goes on.
pub fn exit_code_of(f: impl FnOnce() -> i32 + std::panic::UnwindSafe) -> i32 {
    std::panic::catch_unwind(f).unwrap_or_else(|payload| {
        let text = payload
            .downcast_ref::<String>()
            .map(String::as_str)
            .or_else(|| payload.downcast_ref::<&str>().copied())
            .unwrap_or("");
        if text.starts_with("failed printing to stderr") {
            EXIT_FINDINGS
        } else {
            std::panic::resume_unwind(payload)
        }
    })
}

pub fn json<T: serde::Serialize>(v: &T) -> String {
    let mut s = serde_json::to_string_pretty(v).expect("report types serialize");
    s.push('\n');
    s
}

/// Where an output file goes, decided by [`prepare`] before the work.
#[derive(Debug, Clone)]
pub enum Target {
    /// A regular file (existing or new), replaced atomically. `path` is the file itself
    /// (symbolic links followed); `permissions` are those of the file it replaces.
    Replace {
        path: PathBuf,
        permissions: Option<Permissions>,
    },
    /// A FIFO or a character device (or a regular file reached through `/dev` or `/proc`,
    /// such as `/dev/stdout` redirected to a file), written in place; `append` for the
    /// regular file, so that what the shell put there is not overwritten.
    InPlace { path: PathBuf, append: bool },
    /// `/dev/stdout` (or `/dev/fd/1`, `/proc/self/fd/1`): written through the process's own
    /// standard output, so the file then keeps its order with what the command prints after
    /// it, whatever standard output is (a pipe, a terminal, a file opened by `>`); a reader
    /// that quit ends the write quietly, as for [`emit`].
    Stdout,
}

/// Decide where `path` is written, and check that it can be: refuses a directory, a block
/// device, a socket, a missing directory and a place the user may not write. The error is
/// the reason, without the path (callers say "cannot write PATH: reason").
pub fn prepare(path: &Path) -> Result<Target, String> {
    use std::os::unix::fs::FileTypeExt;
    if path.as_os_str().is_empty() {
        return Err("the file name is empty".into());
    }
    if ["/dev/stdout", "/dev/fd/1", "/proc/self/fd/1"]
        .iter()
        .any(|p| path == Path::new(p))
    {
        return Ok(Target::Stdout);
    }
    let (real, special) = resolve_links(path)?;
    match std::fs::metadata(path) {
        Ok(m) if m.is_dir() => Err("it is a directory; give a file name".into()),
        Ok(m) if m.file_type().is_block_device() => {
            Err("it is a block device; give a regular file, a FIFO or a character device".into())
        }
        Ok(m) if m.file_type().is_socket() => Err("it is a socket; give a regular file".into()),
        Ok(m) if m.is_file() && !special => {
            // Opening for writing without truncating changes nothing and proves the right to
            // write: the rename would otherwise replace a file the user may not write.
            OpenOptions::new()
                .write(true)
                .open(&real)
                .map_err(|e| reason(&e))?;
            probe_directory(&real)?;
            Ok(Target::Replace {
                path: real,
                permissions: Some(m.permissions()),
            })
        }
        Ok(m) => Ok(Target::InPlace {
            path: path.to_path_buf(),
            append: m.is_file(),
        }),
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => {
            // A new file (or the missing target of a dangling link): its directory must exist
            // and take a new file.
            let dir = directory_of(&real);
            match std::fs::metadata(&dir) {
                Ok(d) if d.is_dir() => {}
                Ok(_) => return Err(format!("{} is not a directory", dir.display())),
                Err(e) if e.kind() == std::io::ErrorKind::NotFound => {
                    return Err(format!("the directory {} does not exist", dir.display()));
                }
                Err(e) => return Err(reason(&e)),
            }
            probe_directory(&real)?;
            Ok(Target::Replace {
                path: real,
                permissions: None,
            })
        }
        Err(e) => Err(reason(&e)),
    }
}

/// Write `text` to `path` by the rules of this module ([`prepare`], then the write).
pub fn write_file(path: &Path, text: &str) -> Result<(), String> {
    let target = prepare(path)?;
    write_to(&target, text)
}

/// Write `text` to a prepared target.
pub fn write_to(target: &Target, text: &str) -> Result<(), String> {
    OutputFile::open(target)?.finish(text)
}

/// Kept for callers that want an `io::Result`: [`write_file`].
pub fn write_atomic(path: &Path, text: &str) -> std::io::Result<()> {
    write_file(path, text).map_err(std::io::Error::other)
}

/// An output file being written: [`Write`] into it (rows may be streamed), then
/// [`OutputFile::commit`]. Dropped without a commit, the temporary file is removed and the
/// destination is left as it was.
pub struct OutputFile {
    file: Sink,
    temp: Option<TempFile>,
    dest: PathBuf,
    permissions: Option<Permissions>,
}

/// Where the bytes of an [`OutputFile`] go.
enum Sink {
    File(File),
    Stdout(std::io::Stdout),
}

impl Write for Sink {
    fn write(&mut self, buf: &[u8]) -> std::io::Result<usize> {
        match self {
            Sink::File(f) => f.write(buf),
            Sink::Stdout(o) => o.write(buf),
        }
    }
    fn flush(&mut self) -> std::io::Result<()> {
        match self {
            Sink::File(f) => f.flush(),
            Sink::Stdout(o) => o.flush(),
        }
    }
}

impl OutputFile {
    pub fn open(target: &Target) -> Result<OutputFile, String> {
        match target {
            Target::Replace { path, permissions } => {
                let (temp, file) = TempFile::create(&directory_of(path))?;
                Ok(OutputFile {
                    file: Sink::File(file),
                    temp: Some(temp),
                    dest: path.clone(),
                    permissions: permissions.clone(),
                })
            }
            Target::InPlace { path, append } => {
                let file = OpenOptions::new()
                    .write(true)
                    .append(*append)
                    .open(path)
                    .map_err(|e| reason(&e))?;
                Ok(OutputFile {
                    file: Sink::File(file),
                    temp: None,
                    dest: path.clone(),
                    permissions: None,
                })
            }
            Target::Stdout => Ok(OutputFile {
                file: Sink::Stdout(std::io::stdout()),
                temp: None,
                dest: PathBuf::from("/dev/stdout"),
                permissions: None,
            }),
        }
    }

    /// Write `text` and [`commit`](OutputFile::commit).
    pub fn finish(mut self, text: &str) -> Result<(), String> {
        match self.file.write_all(text.as_bytes()) {
            Ok(()) => self.commit(),
            Err(e) if self.reader_quit(&e) => Ok(()),
            Err(e) => Err(reason(&e)),
        }
    }

    /// A broken pipe on standard output: the reader quit, which ends the write quietly.
    fn reader_quit(&self, e: &std::io::Error) -> bool {
        matches!(self.file, Sink::Stdout(_)) && e.kind() == std::io::ErrorKind::BrokenPipe
    }

    /// Finish the file: flush it, and for a regular file move it into place.
    pub fn commit(mut self) -> Result<(), String> {
        match self.file.flush() {
            Ok(()) => {}
            Err(e) if self.reader_quit(&e) => return Ok(()),
            Err(e) => return Err(reason(&e)),
        }
        if let Some(temp) = self.temp.take() {
            // A full disk may only show at the sync (delayed allocation): check it before the
            // rename, so a short file never replaces a good one.
            if let Sink::File(f) = &self.file {
                f.sync_all().map_err(|e| reason(&e))?;
            }
            if let Some(p) = &self.permissions {
                std::fs::set_permissions(&temp.path, p.clone()).map_err(|e| reason(&e))?;
            }
            std::fs::rename(&temp.path, &self.dest).map_err(|e| reason(&e))?;
            temp.disarm();
        }
        Ok(())
    }
}

impl Write for OutputFile {
    fn write(&mut self, buf: &[u8]) -> std::io::Result<usize> {
        self.file.write(buf)
    }
    fn flush(&mut self) -> std::io::Result<()> {
        self.file.flush()
    }
}

/// The reason of an I/O error in words (without the OS error number).
fn reason(e: &std::io::Error) -> String {
    match e.kind() {
        std::io::ErrorKind::PermissionDenied => "permission denied".into(),
        std::io::ErrorKind::StorageFull => "no space left on the device".into(),
        _ => {
            let s = e.to_string();
            match s.find(" (os error") {
                Some(i) => s[..i].to_string(),
                None => s,
            }
        }
    }
}

/// The directory a file is in ("." for a bare name).
fn directory_of(path: &Path) -> PathBuf {
    path.parent()
        .filter(|p| !p.as_os_str().is_empty())
        .unwrap_or(Path::new("."))
        .to_path_buf()
}

/// Follow the chain of symbolic links from `path` to the file it names (which may not exist
/// yet); also says whether the chain passes through `/dev` or `/proc` (`/dev/stdout` and
/// its kind), whose files are written in place.
fn resolve_links(path: &Path) -> Result<(PathBuf, bool), String> {
    let special = |p: &Path| p.starts_with("/dev") || p.starts_with("/proc");
    let mut p = path.to_path_buf();
    let mut through_special = special(&p);
    for _ in 0..40 {
        match std::fs::symlink_metadata(&p) {
            Ok(m) if m.file_type().is_symlink() => {
                let link = std::fs::read_link(&p).map_err(|e| reason(&e))?;
                p = directory_of(&p).join(link);
                through_special |= special(&p);
            }
            _ => return Ok((p, through_special)),
        }
    }
    Err("too many levels of symbolic links".into())
}

/// Check that a new file can be made beside `path` (the temporary file is), by making one and
/// removing it.
fn probe_directory(path: &Path) -> Result<(), String> {
    let (temp, _file) = TempFile::create(&directory_of(path))?;
    drop(temp);
    Ok(())
}

// ---------------------------------------------------------------------------------------
// Temporary files, removed on failure and on interrupt
// ---------------------------------------------------------------------------------------

/// Temporary files that exist now; the interrupt handler removes them.
static TEMPORARIES: Mutex<Vec<PathBuf>> = Mutex::new(Vec::new());
static NEXT_TEMP: AtomicUsize = AtomicUsize::new(0);
static HANDLER: std::sync::Once = std::sync::Once::new();

/// A temporary file beside an output; removed when dropped unless disarmed after the rename.
struct TempFile {
    path: PathBuf,
    armed: bool,
}

impl TempFile {
    fn create(dir: &Path) -> Result<(TempFile, File), String> {
        HANDLER.call_once(install_interrupt_handler);
        loop {
            let n = NEXT_TEMP.fetch_add(1, Ordering::Relaxed);
            let path = dir.join(format!(".rxnet-{}-{n}.tmp", std::process::id()));
            // Registered before it exists, so an interrupt between the two cannot leave it.
            lock_temporaries().push(path.clone());
            let temp = TempFile { path, armed: true };
            match OpenOptions::new()
                .write(true)
                .create_new(true)
                .open(&temp.path)
            {
                Ok(f) => return Ok((temp, f)),
                Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => {
                    // Not ours: leave it, and do not remove it on drop.
                    let mut t = temp;
                    t.forget();
                    continue;
                }
                Err(e) => {
                    let mut t = temp;
                    t.forget();
                    return Err(reason(&e));
                }
            }
        }
    }

    /// The file was renamed into place: nothing to remove.
    fn disarm(mut self) {
        self.forget();
    }

    fn forget(&mut self) {
        self.armed = false;
        lock_temporaries().retain(|p| p != &self.path);
    }
}

impl Drop for TempFile {
    fn drop(&mut self) {
        if self.armed {
            let _ = std::fs::remove_file(&self.path);
            self.forget();
        }
    }
}

fn lock_temporaries() -> std::sync::MutexGuard<'static, Vec<PathBuf>> {
    TEMPORARIES.lock().unwrap_or_else(|p| p.into_inner())
}

/// On SIGINT, SIGTERM or SIGHUP: remove the temporary files and end with 128 + the signal
/// number, as the signal itself would have (common practice of shells). Installed with the
/// first temporary file; before that, a signal ends the process as usual.
fn install_interrupt_handler() {
    use signal_hook::consts::{SIGHUP, SIGINT, SIGTERM};
    let Ok(mut signals) = signal_hook::iterator::Signals::new([SIGINT, SIGTERM, SIGHUP]) else {
        return;
    };
    let _ = std::thread::Builder::new()
        .name("rxnet-signals".into())
        .spawn(move || {
            if let Some(sig) = signals.forever().next() {
                // Held until the exit, so no new temporary file appears after the clean-up.
                let temps = lock_temporaries();
                for p in temps.iter() {
                    let _ = std::fs::remove_file(p);
                }
                std::process::exit(128 + sig);
            }
        });
}
