//! Batch: `dosing` (semibatch streams) and `withdrawal`.
//!
//! A dosing stream is a liquid of given concentrations and temperature entering at a
//! volumetric rate q(t): a constant over [from, to] or a piecewise-linear profile. A withdrawal
//! takes the contents out at q_out(t). The liquid volume V(t) = V0 + ∫ (Σ q − q_out) dt is
//! explicit in t, so the loader checks here that the vessel never empties over the batch.

use super::messages::significant;
use super::species::species_map;
use super::stream::StreamContext;
use super::{Cx, LoadError, conc};
use crate::model::file::*;
use crate::model::*;
use crate::units::Dim;

/// The dosing streams and the withdrawal of a batch at field `at` (`reactor`).
pub(super) fn build_semibatch(
    r: &RawReactor,
    at: &str,
    reactor: &Reactor,
    sc: &StreamContext,
    cx: &Cx,
) -> Result<(Vec<Dosing>, Option<Withdrawal>), LoadError> {
    if r.dosing.is_none() && r.withdrawal.is_none() {
        return Ok((Vec::new(), None));
    }
    let key = if r.dosing.is_some() {
        "dosing"
    } else {
        "withdrawal"
    };
    let field = format!("{at}.{key}");
    let Reactor::Batch { time, mode, .. } = *reactor else {
        return Err(cx.err(
            &field,
            &format!(
                "dosing is a batch pattern (semibatch): `{key}` needs `type: batch`, not a {}",
                reactor.kind()
            ),
            Some(match reactor {
                Reactor::Cstr { .. } => {
                    "for a stream joining a tank, write a `train` and give the unit a `join`".into()
                }
                _ => "feed a tube along its length with `side_feeds` or `distributed_feeds`".into(),
            }),
        ));
    };
    if sc.phase == Phase::Gas {
        return Err(cx.err(
            &field,
            "a semibatch doses a liquid: `dosing` and `withdrawal` need `phase: liquid` (the liquid volume grows with what is dosed; a gas fills the vessel)",
            Some("model a gas fed over time as a flow reactor".into()),
        ));
    }
    if mode == BatchMode::ConstantPressure {
        return Err(cx.err(
            &format!("{at}.mode"),
            "a semibatch runs in `mode: constant_volume` (the liquid volume follows the dosing, not the pressure)",
            Some("drop `mode` or write `mode: constant_volume`".into()),
        ));
    }
    let mut dosing = Vec::new();
    for (k, d) in r.dosing.iter().flatten().enumerate() {
        let f = format!("{at}.dosing[{k}]");
        let Some(cs) = &d.concentrations else {
            return Err(cx.err(
                &f,
                "a dosing stream needs `concentrations` (mol/L of each dosed species)",
                Some("e.g. `concentrations: {B: 4 mol/L}`".into()),
            ));
        };
        let concentrations = species_map(
            &format!("{f}.concentrations"),
            cs,
            sc.index,
            conc(),
            "a concentration",
            "4 mol/L",
            "200 g/L",
            sc.species,
            cx,
        )?;
        if let Some(j) = concentrations.iter().position(|c| *c < 0.0) {
            return Err(cx.err(
                &format!("{f}.concentrations.{}", sc.species[j].name),
                "a concentration is zero or positive",
                None,
            ));
        }
        if !(concentrations.iter().sum::<f64>() > 0.0) {
            return Err(cx.err(
                &format!("{f}.concentrations"),
                "the dosed liquid carries nothing: at least one species needs a positive concentration",
                Some("e.g. `concentrations: {B: 4 mol/L}`".into()),
            ));
        }
        let temperature = match &d.t {
            None => sc.feed.temperature,
            Some(q) => {
                let v = cx.qty(
                    &format!("{f}.T"),
                    q,
                    Dim::TEMPERATURE,
                    "a temperature",
                    "298 K",
                )?;
                cx.positive(&format!("{f}.T"), v, "the absolute temperature")?
            }
        };
        let Some(rate) = &d.rate else {
            return Err(cx.err(
                &f,
                "a dosing stream needs its volumetric `rate`",
                Some(
                    "e.g. `rate: 0.2 L/s` (over `from`..`to`) or points `rate: [[0 h, 0.3 L/s], [2 h, 0.1 L/s]]`"
                        .into(),
                ),
            ));
        };
        let rate = schedule(&f, rate, &d.from, &d.to, time, cx)?;
        dosing.push(Dosing {
            concentrations,
            temperature,
            rate,
        });
    }
    let withdrawal = match &r.withdrawal {
        None => None,
        Some(w) => {
            let f = format!("{at}.withdrawal");
            Some(Withdrawal {
                rate: schedule(&f, &w.rate, &w.from, &w.to, time, cx)?,
            })
        }
    };
    if let Some(w) = &withdrawal {
        let v0 = sc.feed.volumetric;
        let rates: Vec<(&Schedule, f64)> = dosing
            .iter()
            .map(|d| (&d.rate, 1.0))
            .chain(std::iter::once((&w.rate, -1.0)))
            .collect();
        if let Some((t, v)) = lowest_volume(v0, &rates, time)
            && !(v > 1e-9 * v0)
        {
            return Err(cx.err(
                &format!("{at}.withdrawal.rate"),
                &format!(
                    "the withdrawal empties the vessel: V(t) = V0 + ∫(q_in − q_out) dt falls to {} L at t = {} s (V0 = {} L)",
                    significant(v * 1e3),
                    significant(t),
                    significant(v0 * 1e3)
                ),
                Some("withdraw less, later or for a shorter time, or dose more".into()),
            ));
        }
    }
    Ok((dosing, withdrawal))
}

/// A volumetric rate over time at field `f`: a constant over [from, to] (defaults 0 and the
/// batch time), or points [[t, q], ...] with t strictly ascending. Rates are zero or positive,
/// times not negative, and the rate starts before the batch ends (a window may run past the end:
/// nothing enters after it).
fn schedule(
    f: &str,
    rate: &RawVolumetricRate,
    from: &Option<RawQty>,
    to: &Option<RawQty>,
    time: f64,
    cx: &Cx,
) -> Result<Schedule, LoadError> {
    let flow = Dim::volume().div(Dim::TIME);
    let when = |field: &str, q: &RawQty| cx.qty(field, q, Dim::TIME, "a time", "1 h");
    let nonnegative = |field: &str, q: f64| {
        if q >= 0.0 {
            Ok(q)
        } else {
            Err(cx.err(
                field,
                &format!(
                    "a volumetric rate is zero or positive, got {} L/s",
                    significant(q * 1e3)
                ),
                Some("a withdrawal is written under `withdrawal`, with a positive rate".into()),
            ))
        }
    };
    let within = |field: &str, t: f64| {
        if t >= 0.0 {
            Ok(t)
        } else {
            Err(cx.err(
                field,
                &format!(
                    "the time {} s is before the start of the batch",
                    significant(t)
                ),
                Some("times count from the start of the batch, t = 0".into()),
            ))
        }
    };
    let starts = |field: &str, t: f64| {
        if t < time {
            Ok(())
        } else {
            Err(cx.err(
                field,
                &format!(
                    "the rate starts at {} s, at or after the end of the batch ({} s): it would never run",
                    significant(t),
                    significant(time)
                ),
                Some("start it earlier or make `reactor.time` longer".into()),
            ))
        }
    };
    match rate {
        RawVolumetricRate::Constant(q) => {
            let field = format!("{f}.rate");
            let q = cx.qty(&field, q, flow, "a volumetric rate", "0.2 L/s")?;
            let q = nonnegative(&field, q)?;
            let a = match from {
                Some(v) => within(&format!("{f}.from"), when(&format!("{f}.from"), v)?)?,
                None => 0.0,
            };
            let b = match to {
                Some(v) => within(&format!("{f}.to"), when(&format!("{f}.to"), v)?)?,
                None => time,
            };
            if !(a < b) {
                return Err(cx.err(
                    &format!("{f}.to"),
                    &format!(
                        "the window ends before it starts: from = {} s, to = {} s",
                        significant(a),
                        significant(b)
                    ),
                    Some("`from` is earlier than `to`".into()),
                ));
            }
            starts(&format!("{f}.from"), a)?;
            Ok(Schedule::constant(a, b, q))
        }
        RawVolumetricRate::Profile(points) => {
            let field = format!("{f}.rate");
            if from.is_some() || to.is_some() {
                return Err(cx.err(
                    &format!("{f}.{}", if from.is_some() { "from" } else { "to" }),
                    "a rate given as points carries its own times: drop `from` and `to`",
                    None,
                ));
            }
            if points.len() < 2 {
                return Err(cx.err(
                    &field,
                    "a rate profile needs at least two points [time, rate]",
                    Some("e.g. `rate: [[0 h, 0.3 L/s], [2 h, 0.1 L/s]]`".into()),
                ));
            }
            let mut out: Vec<(f64, f64)> = Vec::with_capacity(points.len());
            for (k, (t, q)) in points.iter().enumerate() {
                let fk = format!("{field}[{k}]");
                let t = within(&fk, when(&fk, t)?)?;
                let q = nonnegative(&fk, cx.qty(&fk, q, flow, "a volumetric rate", "0.2 L/s")?)?;
                if let Some(&(prev, _)) = out.last()
                    && !(t > prev)
                {
                    return Err(cx.err(
                        &fk,
                        &format!(
                            "the times of a rate profile ascend: {} s follows {} s",
                            significant(t),
                            significant(prev)
                        ),
                        Some("list the points in order of time, each later than the last".into()),
                    ));
                }
                out.push((t, q));
            }
            starts(&format!("{field}[0]"), out[0].0)?;
            Ok(Schedule { points: out })
        }
    }
}

/// The lowest liquid volume over [0, time] and when: V(t) = V0 + Σ_s sign_s ∫_0^t q_s dt with
/// the rates piecewise linear, so the net rate is linear between the union of the breakpoints
/// and V can only have a minimum at a breakpoint, at the ends, or where the net rate crosses
/// zero from below inside a piece.
pub(crate) fn lowest_volume(v0: f64, rates: &[(&Schedule, f64)], time: f64) -> Option<(f64, f64)> {
    let volume = |t: f64| {
        v0 + rates
            .iter()
            .map(|(s, sign)| sign * s.integral(0.0, t))
            .sum::<f64>()
    };
    let net = |t: f64| rates.iter().map(|(s, sign)| sign * s.value(t)).sum::<f64>();
    let mut times: Vec<f64> = rates
        .iter()
        .flat_map(|(s, _)| s.breakpoints())
        .chain([0.0, time])
        .filter(|t| (0.0..=time).contains(t))
        .collect();
    times.sort_by(f64::total_cmp);
    times.dedup();
    let mut candidates = times.clone();
    for w in times.windows(2) {
        let (a, b) = (w[0], w[1]);
        // The net rate is linear inside (a, b): its one-sided limits from two interior points.
        let (t1, t2) = (a + (b - a) / 3.0, a + 2.0 * (b - a) / 3.0);
        let (g1, g2) = (net(t1), net(t2));
        let slope = (g2 - g1) / (t2 - t1);
        if slope > 0.0 {
            let root = t1 - g1 / slope;
            if root > a && root < b {
                candidates.push(root);
            }
        }
    }
    candidates
        .into_iter()
        .map(|t| (t, volume(t)))
        .min_by(|x, y| x.1.total_cmp(&y.1))
}
