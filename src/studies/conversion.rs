//! The size at which the key reactant reaches a given conversion (`rxnet size`, compare's
//! equal-conversion screens, optimize's conversion constraint), or the largest conversion the
//! reactor can reach (equilibrium, or a co-reactant that runs out); with the tools those
//! searches share: the CSTR residual tolerance at a size and the bisection on ln V.

use super::study::StudyError;
use crate::model::{Network, Reactor};
use crate::reactor::Balance;
use crate::solve::{self, SolveOptions};

/// How far a reactor can take the key conversion.
#[derive(Debug, Clone, PartialEq)]
pub enum Reach {
    /// The size (V, W or t, SI) at which the conversion is reached.
    Size(f64),
    /// The conversion is never reached: it approaches `x_max` as the size grows without bound.
    Beyond {
        x_max: f64,
        /// Why: "equilibrium" (a reversible reaction stops) or the co-reactant that runs out.
        reason: String,
    },
}

/// Largest number of decades the size is grown by while looking for a conversion.
const DECADES: usize = 40;

/// Why the conversion stops at the end state `y`: a reactant of the key's reactions (other
/// than the key) that is used up, else equilibrium (a reversible reaction), else no reaction.
fn limit_reason(net: &Network, y: &[f64]) -> String {
    let a = net.key;
    let total = net.feed.total();
    for r in &net.reactions {
        if r.nu(a) >= 0.0 {
            continue;
        }
        for t in &r.reactants {
            if t.species != a && y[t.species] <= 1e-9 * total {
                return format!("{} runs out", net.species[t.species].name);
            }
        }
    }
    if net.reactions.iter().any(|r| r.reversible) {
        "equilibrium".into()
    } else {
        "the reactions stop".into()
    }
}

/// The size at which the key conversion reaches `x` in this reactor, or the most it can reach.
///
/// PFR, packed bed, batch: one integration from the inlet, stopped where X − x changes sign,
/// extended tenfold at a time beyond the study's size. The conversion counts as settled (X_eq,
/// or the co-reactant exhausted) when the amounts change by less than 1e-10 of the feed over
/// another tenfold length (max_j |dF_j/dx| · x ≤ 1e-11 F_total).
/// CSTR: X(V) by steady-state solves at V = size · 10^k until it passes x, then bisection on
/// ln V to 1e-14; settled when a tenfold V changes X by less than 1e-10, X_eq then extrapolated
/// from the 1/V tail, X_eq ≈ X(10V) + (X(10V) − X(V))/9.
pub fn reach_conversion(net: &Network, x: f64, opts: &SolveOptions) -> Result<Reach, StudyError> {
    if solve::train::is_flowsheet(net) {
        return reach_flowsheet(net, x, opts);
    }
    refuse_heat_cstr(net, "the volume that reaches a conversion")?;
    refuse_walls(net, "the size that reaches a conversion")?;
    let b = Balance::new(net).map_err(StudyError::Invalid)?;
    if solve::shooting::is_counter_current(&b) {
        return Err(StudyError::Invalid(solve::shooting::size_study_refusal(
            "the size for a conversion",
        )));
    }
    let a = net.key;
    let f0 = net.feed.amounts[a];
    if f0 <= 0.0 && crate::reactor::dosed_by(net, net.size())[a] > 0.0 {
        return Err(StudyError::Invalid(format!(
            "the key reactant {} is dosed, not charged: its conversion is not defined from the start of the batch; name a charged reactant as `key` for the time to a conversion",
            net.species[a].name
        )));
    }
    if f0 <= 0.0 {
        return Err(StudyError::Invalid(format!(
            "the key reactant {} is not fed",
            net.species[a].name
        )));
    }
    let conv = |y: &[f64]| (f0 - y[a]) / f0;
    // A semibatch at time t: the key fed by then (charged and dosed) less what is in the
    // vessel and what was withdrawn, over the key fed by then.
    let conv_at = |t: f64, y: &[f64]| {
        if net.contacting.dosing.is_empty() && b.withdrawn_index().is_none() {
            return conv(y);
        }
        let fed = f0 + crate::reactor::dosed_by(net, t)[a];
        let gone = b.withdrawn_index().map_or(0.0, |l0| y[l0 + a]);
        (fed - y[a] - gone) / fed
    };
    let total = net.feed.total();
    let size = net.size();
    if let Reactor::Cstr { .. } = net.reactor {
        let at = |v: f64| -> Result<(f64, Vec<f64>), StudyError> {
            let tol = cstr_tolerance(net, &b, v);
            let f = solve::cstr_outlet(net, &b, v, tol, opts.steady_state)
                .map_err(StudyError::Solve)?;
            Ok((conv(&f), f))
        };
        match walk_decades(size, x, &at)? {
            Walk::Passed { below, beyond } => {
                let (l, h) = bisect_ln(below, beyond, |v| Ok(at(v)?.0 < x))?;
                // With several steady states the chosen branch can jump over x (ignition or
                // extinction): then the bracket closes on the jump, not on a state with
                // conversion x, and that size would be a wrong answer.
                let (x_below, x_above) = (at(l.exp())?.0, at(h.exp())?.0);
                if x_above - x_below > 1e-6 {
                    return Err(StudyError::Infeasible(format!(
                        "the steady state followed (solver.steady_state: {}) jumps from X = {} to X = {} near V = {:.6e} m3, past conversion {x} of {}: that conversion lies on a part of the CSTR's steady-state curve this choice does not follow, possibly the unstable middle branch, which the vessel cannot hold without control (list the states at a volume with `rxnet run --set reactor.volume=...`, or try the other branch with --steady-state)",
                        opts.steady_state
                            .or(net.solver.steady_state)
                            .unwrap_or_default(),
                        crate::report::num(x_below),
                        crate::report::num(x_above),
                        (0.5 * (l + h)).exp(),
                        net.species[a].name
                    )));
                }
                Ok(Reach::Size((0.5 * (l + h)).exp()))
            }
            Walk::Settled {
                x: xv,
                previous: p,
                state: f,
            } => Ok(Reach::Beyond {
                x_max: xv + (xv - p) / 9.0,
                reason: limit_reason(net, &f),
            }),
            Walk::NotReached => Err(StudyError::Infeasible(format!(
                "conversion {x} is not reached below V = {:.3e} m3 and the conversion has not settled",
                size * 10f64.powi(DECADES as i32 - 1)
            ))),
        }
    } else {
        let g = |t: f64, y: &[f64]| conv_at(t, y) - x;
        let mut y = b.initial_state(net);
        let (mut from, mut len) = (0.0, size);
        let mut d = vec![0.0; y.len()];
        for _ in 0..DECADES {
            let (root, end) = match solve::trace_root(net, &b, &y, from, len, &g, opts) {
                Ok(r) => r,
                // A bed with pressure drop cannot be made longer than where its pressure runs
                // out (P/P0 → 0 as αW → 1 for constant F_T; Ergun lumped form, common
                // practice): say so rather than pass on the integrator's failure there.
                Err(solve::SolveError::Integration { x: at, .. }) if b.has_pressure() => {
                    return Err(StudyError::Infeasible(format!(
                        "conversion {x} of {} is not reached before the bed's pressure runs out near W = {:.4e} kg (P/P0 → 0 with the bed constant α = {:.4e} 1/kg); a longer bed cannot reach it: lower the pressure drop (larger cross-section or particles) or raise the inlet pressure",
                        net.species[a].name,
                        from + at,
                        b.alpha().unwrap_or(f64::NAN)
                    )));
                }
                Err(e) => return Err(e.into()),
            };
            if let Some((s, _)) = root {
                return Ok(Reach::Size(from + s));
            }
            from += len;
            b.rhs_at(from, &end, &mut d);
            let n = net.species.len();
            let change = d[..n].iter().fold(0.0f64, |m, v| m.max(v.abs())) * from;
            if change <= 1e-11 * total {
                return Ok(Reach::Beyond {
                    x_max: conv_at(from, &end),
                    reason: limit_reason(net, &end),
                });
            }
            y = end;
            len = 9.0 * from;
        }
        let (xn, xu, _) = solve::reactor_axis(net);
        Err(StudyError::Infeasible(format!(
            "conversion {x} is not reached below {xn} = {from:.3e} {xu} and the conversion has not settled"
        )))
    }
}

/// Refuse a search over the volume of a CSTR with an energy balance (`what` names it). Its
/// conversion is not monotone in V and jumps where a steady state ignites or is extinguished,
/// and each volume needs the whole temperature search of [`crate::solve::cstr_heat`]: the
/// bisection and continuation in V here assume an isothermal CSTR and could return a size on a
/// branch the vessel does not hold. Runs at chosen volumes (`run`, `sweep` over
/// reactor.volume) list every steady state instead.
pub fn refuse_heat_cstr(net: &Network, what: &str) -> Result<(), StudyError> {
    if matches!(net.reactor, Reactor::Cstr { .. }) && net.heat.balance().is_some() {
        return Err(StudyError::Invalid(format!(
            "{what} is not searched for a CSTR with an energy balance (reactor.heat): its conversion is not monotone in the volume and jumps at ignition and extinction, so a search over V could land on a branch the vessel does not hold; run it at chosen volumes instead (`rxnet sweep` over reactor.volume, or `rxnet run --set reactor.volume=...`, which list every steady state)"
        )));
    }
    Ok(())
}

/// Refuse a search over the size of a tube with walls (`what` names it). A distributed feed
/// enters over a stretch fixed along the tube as written and a membrane's species leave by
/// the wall, so neither the conversion against the feed alone nor a tube made longer or
/// shorter than written keeps the pattern the study describes. Runs at chosen sizes (`run`,
/// `sweep` over the size, which judge everything fed and everything that left) do.
pub fn refuse_walls(net: &Network, what: &str) -> Result<(), StudyError> {
    let units = net
        .train
        .iter()
        .flat_map(|t| t.units.iter().map(|u| &u.contacting));
    let Some(c) = std::iter::once(&net.contacting)
        .chain(units)
        .find(|c| !c.distributed.is_empty() || !c.membrane.is_empty())
    else {
        return Ok(());
    };
    Err(StudyError::Invalid(format!(
        "{what} is not searched for a tube with {}: the stretches and the wall are fixed along the tube as written, so a tube of another size is another pattern; run it at chosen sizes instead (`rxnet sweep` over {}, or `rxnet run --set {}=...`)",
        if c.distributed.is_empty() {
            "a membrane wall"
        } else {
            "a distributed feed"
        },
        net.size_path(),
        net.size_path()
    )))
}

/// The size at which the key conversion reaches `x`; an `Infeasible` error naming the largest
/// conversion when `x` is beyond it.
pub fn size_for_conversion(net: &Network, x: f64, opts: &SolveOptions) -> Result<f64, StudyError> {
    match reach_conversion(net, x, opts)? {
        Reach::Size(s) => Ok(s),
        Reach::Beyond { x_max, reason } => Err(StudyError::Infeasible(beyond_message(
            net, x, x_max, &reason,
        ))),
    }
}

/// A train (or a tube with side feeds or a recycle): the total size, every unit scaled in
/// proportion ([`Network::with_size`]), at which the key conversion on everything fed reaches
/// `x`: decades from the study's size until X passes x, then bisection on ln of the total; the
/// most it can reach when a tenfold size changes X by less than 1e-10.
fn reach_flowsheet(net: &Network, x: f64, opts: &SolveOptions) -> Result<Reach, StudyError> {
    refuse_walls(net, "the size that reaches a conversion")?;
    if net
        .vessels()
        .iter()
        .any(|(r, h)| matches!(r, Reactor::Cstr { .. }) && h.balance().is_some())
    {
        return Err(StudyError::Invalid(
            "the size for a conversion is not searched for a train with a non-isothermal tank: its conversion can jump at ignition and extinction; run it at chosen sizes (`rxnet sweep` over train.<id>.volume)".into(),
        ));
    }
    let size = net.size();
    let at = |v: f64| -> Result<(f64, Vec<f64>), StudyError> {
        let n = net.with_size(v);
        let sim = solve::simulate(&n, opts).map_err(StudyError::Solve)?;
        let (fed, left) = super::evaluate::totals(&n, &sim);
        Ok(((fed[n.key] - left[n.key]) / fed[n.key], left))
    };
    match walk_decades(size, x, &at)? {
        Walk::Passed { below, beyond } => {
            let (l, h) = bisect_ln(below, beyond, |v| Ok(at(v)?.0 < x))?;
            Ok(Reach::Size((0.5 * (l + h)).exp()))
        }
        Walk::Settled {
            x: xv, state: f, ..
        } => Ok(Reach::Beyond {
            x_max: xv,
            reason: limit_reason(net, &f),
        }),
        Walk::NotReached => Err(StudyError::Infeasible(format!(
            "conversion {x} is not reached by a train {DECADES} decades larger than the study's"
        ))),
    }
}

/// How a walk over the sizes size·10^k ended.
enum Walk {
    /// X reached the target at `beyond`; `below` is the last size short of it (1e-9 of the
    /// study's size at the first step).
    Passed { below: f64, beyond: f64 },
    /// A tenfold size changed X by less than 1e-10: X settled at `x` (`previous` a decade
    /// smaller), with the state there.
    Settled {
        x: f64,
        previous: f64,
        state: Vec<f64>,
    },
    /// Neither in DECADES decades.
    NotReached,
}

/// X at size·10^k, k = 0, 1, … (each from `at`, which gives X and the outlet state), until X
/// reaches `x` or settles: the size searches that solve whole vessels (a CSTR's steady states,
/// a train) share it and bisect on ln(size) from the bracket it leaves.
fn walk_decades(
    size: f64,
    x: f64,
    at: &dyn Fn(f64) -> Result<(f64, Vec<f64>), StudyError>,
) -> Result<Walk, StudyError> {
    let mut below = 1e-9 * size;
    let mut prev: Option<f64> = None;
    for k in 0..DECADES {
        let v = size * 10f64.powi(k as i32);
        let (xv, state) = at(v)?;
        if xv >= x {
            return Ok(Walk::Passed { below, beyond: v });
        }
        if let Some(p) = prev
            && (xv - p).abs() <= 1e-10
        {
            return Ok(Walk::Settled {
                x: xv,
                previous: p,
                state,
            });
        }
        prev = Some(xv);
        below = v;
    }
    Ok(Walk::NotReached)
}

/// "conversion 0.9 of A is beyond equilibrium: X approaches X_eq = 0.666667 as V -> ∞".
pub fn beyond_message(net: &Network, x: f64, x_max: f64, reason: &str) -> String {
    let (xn, _, _) = solve::reactor_axis(net);
    let key = &net.species[net.key].name;
    if reason == "equilibrium" {
        format!(
            "conversion {x} of {key} is beyond equilibrium: the conversion approaches X_eq = {} as {xn} -> ∞",
            crate::report::num(x_max)
        )
    } else {
        format!(
            "conversion {x} of {key} is beyond reach ({reason}): the conversion approaches {} as {xn} -> ∞",
            crate::report::num(x_max)
        )
    }
}

/// The residual tolerance of a CSTR steady state at volume V, mol/s: 1e-14 of the feed plus
/// 1e-14 of V times the rates of change at the feed. The second term is the round-off of
/// V f(F) in a large reactor, where forward and reverse rates are each far above the flows;
/// the error in F is the residual over V ∂f/∂F, so it stays small.
pub fn cstr_tolerance(net: &Network, b: &Balance, volume: f64) -> f64 {
    let f0 = &net.feed.amounts;
    let mut d = vec![0.0; f0.len()];
    b.rhs(f0, &mut d);
    let gross: f64 = d.iter().map(|v| v.abs()).sum();
    1e-14 * (net.feed.total() + volume * gross)
}

/// Bisection on ln V over [lo, hi]: keeps `left(V)` true at the lower end of the bracket and
/// false at the upper, until the bracket is 1e-14 wide in ln V. Returns the bracket (ln V).
pub fn bisect_ln(
    lo: f64,
    hi: f64,
    mut left: impl FnMut(f64) -> Result<bool, StudyError>,
) -> Result<(f64, f64), StudyError> {
    let (mut a, mut c) = (lo.ln(), hi.ln());
    for _ in 0..200 {
        if c - a < 1e-14 {
            break;
        }
        let m = 0.5 * (a + c);
        if left(m.exp())? {
            a = m;
        } else {
            c = m;
        }
    }
    Ok((a, c))
}
