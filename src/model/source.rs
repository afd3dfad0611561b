//! Reading a study's text: from a path, or from standard input for `-`.
//!
//! Every kind of file is read with the same byte cap, [`MAX_STUDY_BYTES`]: a regular file is
//! refused from its size before it is read, anything else (a FIFO, `/dev/stdin`, `/dev/zero`, a
//! pipe into `-`) is read up to one byte past the cap and refused there, so an endless source
//! cannot exhaust memory. The text must be UTF-8; a leading UTF-8 byte-order mark (which some
//! editors write) is dropped, and UTF-16 text is named as such.

use super::LoadError;
use std::io::Read;
use std::path::Path;
use std::sync::atomic::{AtomicBool, Ordering};

/// Largest study accepted, in bytes (a study is a few kilobytes; a generated network of 10,000
/// reactions is a few megabytes).
pub const MAX_STUDY_BYTES: usize = 64 * 1024 * 1024;

/// The UTF-8 encoding of U+FEFF, the byte-order mark.
const UTF8_BOM: &[u8] = &[0xEF, 0xBB, 0xBF];

/// Standard input has been read (it can be read once).
static STDIN_TAKEN: AtomicBool = AtomicBool::new(false);

/// Whether `path` means standard input.
pub fn is_stdin(path: &Path) -> bool {
    path.as_os_str() == "-"
}

/// How a source is named in messages: the path, or `<stdin>` for `-`.
pub fn display_name(path: &Path) -> String {
    if is_stdin(path) {
        "<stdin>".to_string()
    } else {
        path.display().to_string()
    }
}

/// Read a study's text from `path` (`-`: standard input), with the byte cap, as UTF-8 without
/// a byte-order mark.
pub fn read_study(path: &Path) -> Result<String, LoadError> {
    let name = display_name(path);
    let whole = |message: String| LoadError {
        file: name.clone(),
        position: None,
        field: String::new(),
        message,
        hint: None,
    };
    let bytes = if is_stdin(path) {
        if STDIN_TAKEN.swap(true, Ordering::SeqCst) {
            return Err(whole(
                "standard input was already read: give `-` for one study only".into(),
            ));
        }
        let bytes = read_capped(std::io::stdin().lock())
            .map_err(|e| whole(format!("cannot read standard input: {e}")))?;
        if bytes.is_empty() {
            return Err(whole(
                "standard input is empty: pipe a study into it, or give the study's file".into(),
            ));
        }
        bytes
    } else {
        let meta =
            std::fs::metadata(path).map_err(|e| whole(format!("cannot read the file: {e}")))?;
        if meta.is_dir() {
            return Err(whole("it is a directory, not a study file".into()));
        }
        if meta.is_file() && meta.len() > MAX_STUDY_BYTES as u64 {
            return Err(whole(too_big(Some(meta.len()))));
        }
        let file =
            std::fs::File::open(path).map_err(|e| whole(format!("cannot read the file: {e}")))?;
        read_capped(file).map_err(|e| whole(format!("cannot read the file: {e}")))?
    };
    if bytes.len() > MAX_STUDY_BYTES {
        return Err(whole(too_big(None)));
    }
    decode(bytes).map_err(whole)
}

/// Read to the end, or to one byte past the cap.
fn read_capped(r: impl Read) -> std::io::Result<Vec<u8>> {
    let mut bytes = Vec::new();
    r.take(MAX_STUDY_BYTES as u64 + 1).read_to_end(&mut bytes)?;
    Ok(bytes)
}

fn too_big(size: Option<u64>) -> String {
    let mib = MAX_STUDY_BYTES / (1024 * 1024);
    match size {
        Some(n) => format!(
            "the file is {n} bytes; a study may have at most {MAX_STUDY_BYTES} bytes ({mib} MiB)"
        ),
        None => format!(
            "a study may have at most {MAX_STUDY_BYTES} bytes ({mib} MiB), and more were read"
        ),
    }
}

/// UTF-8 text without its byte-order mark; other encodings are refused with what was found.
fn decode(mut bytes: Vec<u8>) -> Result<String, String> {
    if bytes.starts_with(UTF8_BOM) {
        bytes.drain(..UTF8_BOM.len());
    } else if bytes.starts_with(&[0xFF, 0xFE]) || bytes.starts_with(&[0xFE, 0xFF]) {
        return Err(
            "the text is UTF-16 (it starts with a UTF-16 byte-order mark); save it as UTF-8".into(),
        );
    }
    String::from_utf8(bytes).map_err(|e| {
        let at = e.utf8_error().valid_up_to();
        let before = &e.as_bytes()[..at];
        let line = before.iter().filter(|b| **b == b'\n').count() + 1;
        let line_start = before
            .iter()
            .rposition(|b| *b == b'\n')
            .map_or(0, |i| i + 1);
        // The column in characters of the valid text before the bad byte, 1-based.
        let column = String::from_utf8_lossy(&before[line_start..]).chars().count() + 1;
        format!(
            "the text is not UTF-8: invalid byte 0x{:02X} at line {line}, column {column} (byte offset {at}); save the file as UTF-8",
            e.as_bytes()[at]
        )
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_utf8_byte_order_mark_is_dropped() {
        let text = decode(b"\xEF\xBB\xBFname: x\n".to_vec()).expect("UTF-8 with a BOM");
        assert_eq!(text, "name: x\n");
    }

    #[test]
    fn utf16_and_invalid_bytes_are_named() {
        let e = decode(vec![0xFF, 0xFE, b'n', 0]).expect_err("UTF-16");
        assert!(e.contains("UTF-16"), "{e}");
        let e = decode(b"a: 1\nbb: \xC3(\n".to_vec()).expect_err("bad byte");
        assert!(e.contains("line 2, column 5"), "{e}");
        assert!(e.contains("0xC3"), "{e}");
    }

    #[test]
    fn the_cap_holds_for_an_endless_reader() {
        let bytes = read_capped(std::io::repeat(b'a')).expect("read");
        assert_eq!(bytes.len(), MAX_STUDY_BYTES + 1);
    }
}
