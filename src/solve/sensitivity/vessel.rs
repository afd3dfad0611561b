//! Forward sensitivities of a tube, packed bed or batch: the augmented system
//!
//! ```text
//! dy/dx   = f(x, y; θ)
//! ds_k/dx = J(x, y) s_k + ∂f/∂θ_k,      s_k(0) = ∂y_0/∂θ_k,      k = 1..P
//! ```
//!
//! (the forward sensitivity equations; Hairer, Nørsett & Wanner, Solving ODEs I, §I.14, from
//! memory) integrated as one system by the same BDF code and the same pieces between
//! breakpoints as the nominal solve. J is the model's analytic Jacobian; ∂f/∂θ_k is the
//! central difference (f(x, y; θ+δ) − f(x, y; θ−δ))/2δ of the right-hand sides of the two
//! perturbed models at the same state. The Newton matrix is block diagonal, I − hγJ on every
//! block, the simultaneous corrector of Maly & Petzold (Appl. Numer. Math. 20, 1996, from
//! memory), and the sensitivities are in the error test with their species' absolute
//! tolerances (CVODES's default with unit parameter scales).
//!
//! Every state must mean the same in the three models: the pressure state p = P/P0 is relative
//! to each model's own feed pressure, so it is carried in the nominal's P0 (a model's p times
//! P0_model/P0). A counter-current coolant (a boundary-value problem) and a parameter that
//! moves a breakpoint (a dosing window) are refused.

use super::{Perturbed, Sensitivities};
use crate::model::Network;
use crate::reactor::Balance;
use crate::solve::ode::{OdeSystem, Output};
use crate::solve::{SolveError, SolveOptions, floored, ode_options, pieces, simulate, study_error};
use std::cell::RefCell;

/// One parameter's perturbed models, set up for the right-hand side.
struct Direction {
    plus: Balance,
    minus: Balance,
    /// Per state: the model's state in the nominal's units is its own times this (1, except
    /// P0_model/P0 for the pressure ratio).
    plus_scale: Vec<f64>,
    minus_scale: Vec<f64>,
    step: f64,
}

/// Scratch of one right-hand side: Jacobian triplets, the state in each perturbed model's
/// units, and their right-hand sides.
type Scratch = (
    Vec<(usize, usize, f64)>,
    Vec<f64>,
    Vec<f64>,
    Vec<f64>,
    Vec<f64>,
);

/// The augmented system [y; s_1; ...; s_P].
struct Augmented<'a> {
    nominal: &'a Balance,
    dirs: &'a [Direction],
    n: usize,
    scratch: RefCell<Scratch>,
}

impl OdeSystem for Augmented<'_> {
    fn dim(&self) -> usize {
        self.n * (1 + self.dirs.len())
    }

    fn rhs(&self, x: f64, y: &[f64], dydx: &mut [f64]) {
        let n = self.n;
        let (y0, _) = y.split_at(n);
        self.nominal.rhs_at(x, y0, &mut dydx[..n]);
        let mut guard = self.scratch.borrow_mut();
        let (trip, yp, ym, fp, fm) = &mut *guard;
        trip.clear();
        self.nominal.jacobian_at(x, y0, trip);
        for (k, d) in self.dirs.iter().enumerate() {
            let s = &y[n * (k + 1)..n * (k + 2)];
            for i in 0..n {
                yp[i] = y0[i] / d.plus_scale[i];
                ym[i] = y0[i] / d.minus_scale[i];
            }
            d.plus.rhs_at(x, yp, fp);
            d.minus.rhs_at(x, ym, fm);
            let out = &mut dydx[n * (k + 1)..n * (k + 2)];
            for i in 0..n {
                out[i] = (fp[i] * d.plus_scale[i] - fm[i] * d.minus_scale[i]) / d.step;
            }
            for &(r, c, v) in trip.iter() {
                out[r] += v * s[c];
            }
        }
    }

    fn jacobian(&self, x: f64, y: &[f64], out: &mut Vec<(usize, usize, f64)>) {
        let n = self.n;
        let start = out.len();
        self.nominal.jacobian_at(x, &y[..n], out);
        let block: Vec<(usize, usize, f64)> = out[start..].to_vec();
        for k in 1..=self.dirs.len() {
            out.extend(block.iter().map(|&(r, c, v)| (r + k * n, c + k * n, v)));
        }
    }
}

/// The per-state factors that carry `model`'s states in the nominal's units.
fn scale_of(net: &Network, model: &Network, b: &Balance) -> Vec<f64> {
    let mut s = vec![1.0; b.dim()];
    if b.has_pressure() {
        s[b.n_species()] = model.feed.pressure / net.feed.pressure;
    }
    s
}

fn counter_current(b: &Balance) -> bool {
    b.energy()
        .and_then(|e| e.coolant_stream())
        .is_some_and(|c| c.2)
}

/// The sensitivities of a single tube, packed bed or batch (not a CSTR, not a train).
pub fn sensitivities(
    net: &Network,
    perturbed: &[Perturbed],
    opts: &SolveOptions,
) -> Result<Sensitivities, SolveError> {
    let base = Balance::new(net).map_err(SolveError::Setup)?;
    if counter_current(&base) {
        return Err(SolveError::Setup(
            "sensitivities with a counter-current coolant (a boundary-value problem) are not supported; make the coolant co-current or hold its temperature".into(),
        ));
    }
    let sim = simulate(net, opts)?;
    let nominal = floored(net, &base, opts);
    let nominal: &Balance = &nominal;
    let floor = nominal.rates.floor().to_vec();
    let n = nominal.dim();
    let ns = net.species.len();
    let model = |m: &Network, k: usize| -> Result<Balance, SolveError> {
        let mut b = Balance::new(m).map_err(SolveError::Setup)?;
        b.rates.set_floor(&floor);
        if b.layout() != nominal.layout() {
            return Err(SolveError::Setup(format!(
                "sensitivity: parameter {} changes the model's states (an energy balance, a pressure drop or a wall appears or goes)",
                k + 1
            )));
        }
        if b.breakpoints() != nominal.breakpoints() {
            return Err(SolveError::Setup(format!(
                "sensitivity: parameter {} moves a breakpoint of the model (where a dosing or a distributed feed starts, stops or bends): its sensitivity is not a smooth derivative; leave it out",
                k + 1
            )));
        }
        if counter_current(&b) {
            return Err(SolveError::Setup(
                "sensitivities with a counter-current coolant are not supported".into(),
            ));
        }
        Ok(b)
    };
    let mut dirs = Vec::with_capacity(perturbed.len());
    for (k, p) in perturbed.iter().enumerate() {
        let plus = model(&p.plus, k)?;
        let minus = model(&p.minus, k)?;
        dirs.push(Direction {
            plus_scale: scale_of(net, &p.plus, &plus),
            minus_scale: scale_of(net, &p.minus, &minus),
            plus,
            minus,
            step: p.step,
        });
    }
    // y(0) and s_k(0) = (y0(θ+δ) − y0(θ−δ)) / 2δ in the nominal's units.
    let mut y0 = nominal.initial_state(net);
    for (d, p) in dirs.iter().zip(perturbed) {
        let yp = d.plus.initial_state(&p.plus);
        let ym = d.minus.initial_state(&p.minus);
        y0.extend((0..n).map(|i| (yp[i] * d.plus_scale[i] - ym[i] * d.minus_scale[i]) / d.step));
    }
    let mut o = ode_options(net, nominal, opts);
    let atol = o.atol.clone();
    for _ in &dirs {
        o.atol.extend_from_slice(&atol);
    }
    let aug = Augmented {
        nominal,
        dirs: &dirs,
        n,
        scratch: RefCell::new((
            Vec::new(),
            vec![0.0; n],
            vec![0.0; n],
            vec![0.0; n],
            vec![0.0; n],
        )),
    };
    let size = sim.size;
    let out = Output::Points(sim.x.clone());
    let (sol, _) =
        pieces::integrate_watching(&aug, &y0, size, &out, &o, &[], nominal.breakpoints())
            .map_err(|e| study_error(net, size, e))?;
    let p = dirs.len();
    let d_states: Vec<Vec<Vec<f64>>> = (0..p)
        .map(|k| {
            sol.y
                .iter()
                .map(|y| y[n * (k + 1)..n * (k + 1) + ns].to_vec())
                .collect()
        })
        .collect();
    let d_temperature = nominal.temperature_index().map(|ti| {
        (0..p)
            .map(|k| sol.y.iter().map(|y| y[n * (k + 1) + ti]).collect())
            .collect()
    });
    // A size parameter moves the end: ∂y(x_end)/∂θ = s(x_end) + f(x_end, y_end) ∂x_end/∂θ.
    let end = sol.y.last().expect("the outlet is a profile point");
    let mut f_end = vec![0.0; n];
    nominal.rhs_at(size, &end[..n], &mut f_end);
    let d_outlet = perturbed
        .iter()
        .enumerate()
        .map(|(k, pk)| {
            let dx = (pk.plus.reactor.size() - pk.minus.reactor.size()) / pk.step;
            (0..ns)
                .map(|j| end[n * (k + 1) + j] + f_end[j] * dx)
                .collect()
        })
        .collect();
    Ok(Sensitivities {
        sim,
        d_states,
        d_temperature,
        d_outlet,
    })
}
