//! The hot spot of a non-isothermal profile: the largest temperature of the reacting mixture
//! along a tube (PFR, packed bed) or over a batch, and where it occurs.
//!
//! The integrator's own steps bracket the maximum; the step before the largest temperature is
//! the start of a second, short integration that stops where dT/dx changes sign (located on
//! the BDF interpolating polynomial, [`super::ode::integrate_until_root`]). The hot spot is
//! thus resolved to the integration tolerance rather than to the step spacing (a maximum read
//! off the steps is low by about h² |T''| / 8 for a step h across it). A maximum at the inlet
//! or the outlet (a monotone profile) is the end value itself.

use super::ode::{self, OdeError, OdeOptions, OdeSystem, Output};
use crate::reactor::{Balance, Model};

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

/// The balance seen from x0 on: x' = x − x0 (a restart partway along the reactor; the
/// balances depend on x itself only through a batch jacket ramp).
struct Shifted<'a> {
    balance: &'a Balance,
    x0: f64,
}

impl OdeSystem for Shifted<'_> {
    fn dim(&self) -> usize {
        self.balance.dim()
    }
    fn rhs(&self, x: f64, y: &[f64], dydx: &mut [f64]) {
        Model::rhs(self.balance, x + self.x0, y, dydx)
    }
    fn jacobian(&self, x: f64, y: &[f64], out: &mut Vec<(usize, usize, f64)>) {
        Model::jacobian(self.balance, x + self.x0, y, out)
    }
}

/// Integrate from `y0` over `size` and return the hot spot (see the module notes). `balance`
/// must have an energy balance.
pub fn hot_spot(
    balance: &Balance,
    y0: &[f64],
    size: f64,
    o: &OdeOptions,
) -> Result<HotSpot, OdeError> {
    let sol = ode::integrate(&Shifted { balance, x0: 0.0 }, y0, size, &Output::Steps, o)?;
    hot_spot_of_steps(balance, &sol.x, &sol.y, o)
}

/// The hot spot of a profile given at the integrator's steps (`ys` whole model states).
pub fn hot_spot_of_steps(
    balance: &Balance,
    xs: &[f64],
    ys: &[Vec<f64>],
    o: &OdeOptions,
) -> Result<HotSpot, OdeError> {
    let ti = balance
        .temperature_index()
        .expect("a hot spot needs an energy balance");
    let (k, t_max) =
        ys.iter()
            .map(|y| y[ti])
            .enumerate()
            .fold((0, f64::NEG_INFINITY), |best, (k, t)| {
                if t > best.1 { (k, t) } else { best }
            });
    let last = xs.len() - 1;
    if k == 0 || k == last {
        return Ok(HotSpot {
            temperature: t_max,
            at: xs[k],
            interior: false,
        });
    }
    // dT/dx > 0 before the step of largest T; find where it turns negative.
    let x0 = xs[k - 1];
    if !(xs[k + 1] > x0) {
        // Steps that do not advance (a restart at one point): the step value stands.
        return Ok(HotSpot {
            temperature: t_max,
            at: xs[k],
            interior: true,
        });
    }
    let shifted = Shifted { balance, x0 };
    let buf = std::cell::RefCell::new(vec![0.0; balance.dim()]);
    let slope = |x: f64, y: &[f64]| {
        let mut d = buf.borrow_mut();
        Model::rhs(balance, x + x0, y, &mut d);
        d[ti]
    };
    let (_, root) = ode::integrate_until_root(&shifted, &slope, &ys[k - 1], xs[k + 1] - x0, o)?;
    Ok(match root {
        Some((x, y)) if y[ti] >= t_max => HotSpot {
            temperature: y[ti],
            at: x0 + x,
            interior: true,
        },
        // The slope did not turn within the bracket (round-off at a very flat maximum): the
        // largest step value is then within the tolerance of the maximum.
        _ => HotSpot {
            temperature: t_max,
            at: xs[k],
            interior: true,
        },
    })
}
