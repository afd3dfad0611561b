//! Link the `rxnet` executable at a fixed address (not position-independent): the dynamic
//! loader then has no relocations of the program's own to apply at every start (8,887 in the
//! position-independent build, about 0.12 M instructions and 25 page faults of a 5 ms run).
//! The trade: the program's own code is not placed at a random address (address-space layout
//! randomisation still applies to the libraries, the stack and the heap). Only the binary is
//! linked this way; the library, tests and benchmarks are unchanged.

fn main() {
    if std::env::var("CARGO_CFG_TARGET_OS").as_deref() == Ok("linux") {
        println!("cargo:rustc-link-arg-bin=rxnet=-no-pie");
    }
    println!("cargo:rerun-if-changed=build.rs");
}
