//! Any text given to the formula parser must give a Formula or a FormulaError, never a panic.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else {
        return;
    };
    if let Ok(f) = rxnet::model::formula::Formula::parse(text) {
        let _ = f.molar_mass();
    }
});
