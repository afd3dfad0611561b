//! Any text given to the unit and quantity parsers must give a value or a UnitError, never a
//! panic.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else {
        return;
    };
    let _ = rxnet::units::parse_unit(text);
    if let Ok(q) = rxnet::units::parse_quantity(text) {
        let _ = rxnet::units::format_si(q.si, q.dim);
    }
});
