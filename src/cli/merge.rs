//! `rxnet merge SHARD... --out FILE`: the shards of a sweep (`rxnet sweep --shard K/N`) put
//! back together into the file the unsharded sweep writes, after checking that they are all
//! the shards of one sweep and that every point is there once ([`rxnet::studies::shard`]).

use super::output::{EXIT_FINDINGS, EXIT_INVALID, OutputFile, prepare};
use rxnet::studies::shard::{MergeError, ShardSet};
use std::io::Write;
use std::path::{Path, PathBuf};

#[derive(clap::Args)]
pub struct MergeArgs {
    /// The shard files (`rxnet sweep ... --shard K/N --out FILE`), all N of them, in any order.
    #[arg(required = true, value_name = "SHARD")]
    pub shards: Vec<PathBuf>,
    /// The merged file (written atomically; never one of the shards).
    #[arg(long, value_name = "FILE", required = true)]
    pub out: PathBuf,
}

/// Whether two paths name the same existing file (after symbolic links).
fn same_file(a: &Path, b: &Path) -> bool {
    use std::os::unix::fs::MetadataExt;
    match (std::fs::metadata(a), std::fs::metadata(b)) {
        (Ok(x), Ok(y)) => x.dev() == y.dev() && x.ino() == y.ino(),
        _ => false,
    }
}

/// Exit 0 when merged (1 when every point of the sweep failed, as `sweep` does; the file is
/// written), 2 when the shards cannot be merged or `--out` is refused, 1 when the merged
/// file cannot be written. On any error the file at `--out` is left as it was.
pub fn merge(a: &MergeArgs) -> i32 {
    if let Some(input) = a.shards.iter().find(|s| same_file(s, &a.out)) {
        eprintln!(
            "error: --out {} is the shard {}: write the merged file elsewhere",
            a.out.display(),
            input.display()
        );
        return EXIT_INVALID;
    }
    let target = match prepare(&a.out) {
        Ok(t) => t,
        Err(e) => {
            eprintln!("error: cannot write {}: {e}", a.out.display());
            return EXIT_INVALID;
        }
    };
    let set = match ShardSet::open(&a.shards) {
        Ok(s) => s,
        Err(m) => {
            eprintln!("error: {m}");
            return EXIT_INVALID;
        }
    };
    let file = match OutputFile::open(&target) {
        Ok(f) => f,
        Err(e) => {
            eprintln!("error: cannot write {}: {e}", a.out.display());
            return EXIT_FINDINGS;
        }
    };
    let mut w = std::io::BufWriter::with_capacity(1 << 16, file);
    // On an error the output file is dropped uncommitted: its temporary file is removed and
    // the destination keeps what it had.
    let merged = match set.write_merged(&mut w) {
        Ok(m) => m,
        Err(MergeError::Invalid(m)) => {
            eprintln!("error: {m}");
            return EXIT_INVALID;
        }
        Err(MergeError::Write(e)) if e.kind() == std::io::ErrorKind::BrokenPipe => return 0,
        Err(MergeError::Write(e)) => {
            eprintln!("error: cannot write {}: {e}", a.out.display());
            return EXIT_FINDINGS;
        }
    };
    let committed = w
        .flush()
        .map_err(|e| e.to_string())
        .and_then(|_| w.into_inner().map_err(|e| e.error().to_string()))
        .and_then(OutputFile::commit);
    if let Err(e) = committed {
        eprintln!("error: cannot write {}: {e}", a.out.display());
        return EXIT_FINDINGS;
    }
    if merged.failed > 0 && merged.failed == merged.points {
        eprintln!(
            "error: every point of the sweep failed ({} of {}); the rows carry the errors",
            merged.failed, merged.points
        );
        return EXIT_FINDINGS;
    }
    if merged.failed > 0 {
        eprintln!(
            "note: {} of {} points failed; their rows carry the error",
            merged.failed, merged.points
        );
    }
    0
}
