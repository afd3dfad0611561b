//! Any text given to the equation parser must give an Equation or an EquationError, never a
//! panic. A small fixed set of names counts as declared species, so that the glued-coefficient
//! rule (`2H2O` versus a species `B2`) is exercised both ways.
#![no_main]

use libfuzzer_sys::fuzz_target;

const DECLARED: &[&str] = &[
    "A", "B", "C", "D", "B2", "H2", "O2", "H2O", "CO", "CO2", "CH4", "N2", "E'", "X(1)",
];

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else {
        return;
    };
    let is_species = |s: &str| DECLARED.contains(&s);
    if let Ok(eq) = rxnet::model::equation::parse_equation(text, &is_species) {
        let _ = eq.net();
    }
});
