//! Everything the binary writes: exit codes, standard output, JSON, files.

use std::io::Write;

/// Exit code: the study file cannot be read or is invalid (also clap's usage errors).
pub const EXIT_INVALID: i32 = 2;
/// Exit code: the analysis found errors, or a computation failed.
pub const EXIT_FINDINGS: i32 = 1;

/// Print to stdout; a closed pipe (`rxnet ... | head`) ends quietly.
pub fn emit(text: &str) -> bool {
    let mut out = std::io::stdout().lock();
    match out.write_all(text.as_bytes()).and_then(|_| out.flush()) {
        Ok(()) => true,
        Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => false,
        Err(e) => {
            eprintln!("rxnet: cannot write the output: {e}");
            false
        }
    }
}

pub fn json<T: serde::Serialize>(v: &T) -> String {
    let mut s = serde_json::to_string_pretty(v).expect("report types serialize");
    s.push('\n');
    s
}

/// Write a file atomically: a temporary file beside it, then a rename, so an interrupted run
/// never leaves a half-written file that looks complete.
pub fn write_atomic(path: &std::path::Path, text: &str) -> std::io::Result<()> {
    let dir = path
        .parent()
        .filter(|p| !p.as_os_str().is_empty())
        .unwrap_or(std::path::Path::new("."));
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().to_string())
        .unwrap_or_default();
    let tmp = dir.join(format!(".{name}.{}.tmp", std::process::id()));
    std::fs::write(&tmp, text)?;
    std::fs::rename(&tmp, path).inspect_err(|_| {
        let _ = std::fs::remove_file(&tmp);
    })
}
