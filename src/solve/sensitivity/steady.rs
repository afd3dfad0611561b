//! Sensitivities of a CSTR's steady state: the implicit-function derivative. The state shown,
//! y = F (and T with an energy balance), solves G(y; θ) = 0, so
//!
//! ```text
//! ∂y/∂θ_k = −G_y⁻¹ ∂G/∂θ_k
//! ```
//!
//! (implicit-function theorem, common practice), with G_y the analytic Jacobian of the
//! residual the steady-state solve itself uses (species rows F_0 − F + V f(F); with heat, the
//! energy row of [`crate::solve::cstr_heat`]) and ∂G/∂θ_k the central difference of the
//! residuals of the two perturbed models at the same state. Where G_y is singular the state is
//! a turning point of the steady-state curve (ignition or extinction): no derivative exists,
//! and that is an error naming it.

use super::{Perturbed, Sensitivities};
use crate::model::Network;
use crate::reactor::Balance;
use crate::solve::{SolveError, SolveOptions, cstr_heat, floored, simulate};
use nalgebra::{DMatrix, DVector};

/// Residual and Jacobian of the isothermal steady state, G(F) = F_0 − F + V f(F).
fn isothermal(net: &Network, b: &Balance, f: &[f64]) -> (Vec<f64>, DMatrix<f64>) {
    let n = f.len();
    let v = net.reactor.size();
    let mut d = vec![0.0; b.dim()];
    b.rhs_at(0.0, f, &mut d);
    let res = (0..n)
        .map(|j| net.feed.amounts[j] - f[j] + v * d[j])
        .collect();
    let mut trip = Vec::new();
    b.jacobian_at(0.0, f, &mut trip);
    let mut jm = DMatrix::<f64>::zeros(n, n);
    for (r, c, val) in trip {
        jm[(r, c)] += v * val;
    }
    for j in 0..n {
        jm[(j, j)] -= 1.0;
    }
    (res, jm)
}

/// The residual (and Jacobian) of `net`'s CSTR at state (F, T).
fn residual(
    net: &Network,
    b: &Balance,
    f: &[f64],
    t: Option<f64>,
) -> Result<(Vec<f64>, DMatrix<f64>), SolveError> {
    match t {
        Some(t) => cstr_heat::steady_residual(net, b, net.reactor.size(), f, t),
        None => Ok(isothermal(net, b, f)),
    }
}

/// The sensitivities of a single CSTR's steady state shown (the one `simulate` reports).
pub fn sensitivities(
    net: &Network,
    perturbed: &[Perturbed],
    opts: &SolveOptions,
) -> Result<Sensitivities, SolveError> {
    let sim = simulate(net, opts)?;
    let base = Balance::new(net).map_err(SolveError::Setup)?;
    let nominal = floored(net, &base, opts);
    let floor = nominal.rates.floor().to_vec();
    let heat = nominal.has_energy();
    let f = sim.outlet().to_vec();
    let t = if heat {
        sim.temperature.as_ref().map(|t| t[0])
    } else {
        None
    };
    let ns = f.len();
    let (_, jm) = residual(net, &nominal, &f, t)?;
    let lu = jm.clone().lu();
    // Singular, or so ill-conditioned that the derivative has no digit: a turning point.
    let scale = jm.amax();
    let smallest = jm
        .clone()
        .svd(false, false)
        .singular_values
        .iter()
        .copied()
        .fold(f64::INFINITY, f64::min);
    if !(smallest > 1e-13 * scale) {
        return Err(SolveError::Unphysical(format!(
            "the CSTR's steady state shown is at a turning point of the steady-state curve (ignition or extinction: the Jacobian of the balances is singular, smallest singular value {smallest:.3e} of {scale:.3e}); its sensitivities do not exist"
        )));
    }
    let mut d_states = Vec::with_capacity(perturbed.len());
    let mut d_temperature = Vec::with_capacity(perturbed.len());
    for (k, p) in perturbed.iter().enumerate() {
        let model = |m: &Network| -> Result<Vec<f64>, SolveError> {
            let mut b = Balance::new(m).map_err(SolveError::Setup)?;
            b.rates.set_floor(&floor);
            if b.has_energy() != heat {
                return Err(SolveError::Setup(format!(
                    "sensitivity: parameter {} adds or removes the energy balance",
                    k + 1
                )));
            }
            Ok(residual(m, &b, &f, t)?.0)
        };
        let gp = model(&p.plus)?;
        let gm = model(&p.minus)?;
        let dg =
            DVector::from_iterator(gp.len(), gp.iter().zip(&gm).map(|(a, b)| -(a - b) / p.step));
        let s = lu.solve(&dg).ok_or_else(|| {
            SolveError::Unphysical(
                "the CSTR's steady state is at a turning point (singular Jacobian)".into(),
            )
        })?;
        if s.iter().any(|v| !v.is_finite()) {
            return Err(SolveError::Unphysical(format!(
                "the sensitivity of the CSTR's steady state to parameter {} is not finite",
                k + 1
            )));
        }
        d_states.push(vec![s.iter().take(ns).copied().collect::<Vec<f64>>()]);
        d_temperature.push(vec![if heat { s[ns] } else { 0.0 }]);
    }
    let d_outlet = d_states.iter().map(|d| d[0].clone()).collect();
    Ok(Sensitivities {
        sim,
        d_states,
        d_temperature: heat.then_some(d_temperature),
        d_outlet,
    })
}
