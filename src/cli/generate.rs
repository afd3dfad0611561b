//! `rxnet generate`: a generated, atom-consistent mass-action network for benchmarks.

use super::output::{EXIT_INVALID, emit};
use clap::ValueEnum;

#[derive(Clone, Copy, ValueEnum, PartialEq, Eq)]
pub enum GenReactor {
    Pfr,
    Batch,
}

/// `rxnet generate`: a generated study on standard output; exit 2 for an impossible request.
pub fn generate(species: usize, reactions: usize, seed: u64, reactor: GenReactor) -> i32 {
    let spec = rxnet::generate::GeneratorSpec {
        species,
        reactions,
        seed,
        reactor: match reactor {
            GenReactor::Pfr => rxnet::generate::GeneratedReactor::Pfr,
            GenReactor::Batch => rxnet::generate::GeneratedReactor::Batch,
        },
        ..Default::default()
    };
    match rxnet::generate::generate_study(&spec) {
        Ok(text) => emit(&text, 0),
        Err(m) => {
            eprintln!("error: {m}");
            EXIT_INVALID
        }
    }
}
