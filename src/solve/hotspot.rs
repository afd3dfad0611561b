//! The hot spot of a non-isothermal profile: the largest temperature of the reacting mixture
//! along a tube (PFR, packed bed) or over a batch, and where it occurs.
//!
//! The integrator watches T while it integrates ([`super::ode::integrate_watching`]): where
//! dT/dx changes sign within a step, the turning point is located on the step's interpolating
//! polynomial (Illinois method), so the hot spot is resolved to the integration tolerance
//! rather than to the step spacing (a maximum read off the steps is low by about h² |T''| / 8
//! for a step h across it). A maximum at the inlet or the outlet (a monotone profile) is the
//! end value itself.

use super::ode::Extreme;

/// The largest temperature of a profile and where it is.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct HotSpot {
    /// K.
    pub temperature: f64,
    /// Position: V (m3), W (kg) or t (s).
    pub at: f64,
    /// Whether the maximum lies inside the reactor (dT/dx = 0 there) rather than at an end.
    pub interior: bool,
}

impl HotSpot {
    /// The hot spot from the extremes of T watched over [0, `size`].
    pub fn of(t: &Extreme, size: f64) -> HotSpot {
        HotSpot {
            temperature: t.max,
            at: t.max_at,
            interior: t.max_at > 0.0 && t.max_at < size,
        }
    }
}
