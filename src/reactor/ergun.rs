//! The packed bed's pressure drop: the Ergun equation lumped into the bed constant α.

use crate::model::{Network, PressureDrop};
use crate::units::GAS_CONSTANT;

/// α from the Ergun equation: α = 2 β0 / (A_c (1 − φ) ρ_c P0), with
/// β0 = G (1 − φ) / (ρ0 D_p φ³) [150 (1 − φ) μ / D_p + 1.75 G], G = ṁ / A_c, ρ0 = P0 M̄ / (R T0)
/// (Ergun, Chem. Eng. Prog. 48, 1952; lumped form of common practice, SI units so g_c = 1).
pub fn ergun_alpha(net: &Network, pd: &PressureDrop) -> Option<f64> {
    match *pd {
        PressureDrop::Lumped { alpha } => Some(alpha),
        PressureDrop::Ergun {
            particle_diameter: dp,
            void_fraction: phi,
            cross_section: ac,
            viscosity: mu,
            solid_density: rho_c,
        } => {
            let feed = &net.feed;
            let mut mass_flow = 0.0;
            for (j, f) in feed.amounts.iter().enumerate() {
                if *f > 0.0 {
                    mass_flow += f * net.species[j].molar_mass?;
                }
            }
            let mean_m = mass_flow / feed.total();
            let rho0 = feed.pressure * mean_m / (GAS_CONSTANT * feed.temperature);
            let g = mass_flow / ac;
            let beta0 = g * (1.0 - phi) / (rho0 * dp * phi.powi(3))
                * (150.0 * (1.0 - phi) * mu / dp + 1.75 * g);
            Some(2.0 * beta0 / (ac * (1.0 - phi) * rho_c * feed.pressure))
        }
    }
}
