//! Any UTF-8 text given to the study loader must give a Network or a LoadError, never a
//! panic; a loaded network must also survive the analysis that `rxnet check` runs.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else {
        return;
    };
    if let Ok(net) = rxnet::load_str(text, "fuzz.yaml", &[]) {
        let _ = rxnet::analysis::check(&net);
    }
});
