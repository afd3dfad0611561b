//! Streams meeting at a mixing point (a feed joining a train, a side feed, a bypass or a
//! recycle rejoining): species flows add, the volumetric flow follows, and the temperature
//! comes from the enthalpy balance of adiabatic mixing.
//!
//! ```text
//! Σ_s Σ_j F_sj ∫_{T_s}^{T} Cp_j dT = 0            (species heat capacities)
//! T = Σ_s v_s T_s / Σ_s v_s                        (a liquid of one ρ c_p per volume)
//! v = Σ_s v_s  (liquid, ideal mixing)      v = F_T R T / P  (ideal gas)
//! ```
//! (common practice: steady-flow energy balance of a mixer with no shaft work and no heat loss,
//! heats of mixing neglected.)

use crate::model::{Feed, Heat, Network, Phase};
use crate::units::GAS_CONSTANT;

/// Relative temperature difference below which streams count as at one temperature (no heat
/// data needed to mix them).
const SAME_TEMPERATURE: f64 = 1e-12;

/// The stream `s` scaled by `factor` (a split: the same composition and temperature).
pub fn scaled(s: &Feed, factor: f64) -> Feed {
    Feed {
        temperature: s.temperature,
        pressure: s.pressure,
        amounts: s.amounts.iter().map(|f| f * factor).collect(),
        volumetric: s.volumetric * factor,
    }
}

/// Mix `streams` (flows in mol/s, at least one) adiabatically at the pressure of the first.
/// `heat` is the heat model of the vessel the mixture enters, whose `mixture_cp` (a liquid's
/// ρ c_p) takes the place of the species' heat capacities where given. Fails, naming what is
/// missing, when streams at different temperatures meet and no heat capacity is known.
pub fn mix(net: &Network, heat: &Heat, streams: &[&Feed]) -> Result<Feed, String> {
    let t_min = streams
        .iter()
        .map(|s| s.temperature)
        .fold(f64::INFINITY, f64::min);
    let t_max = streams.iter().map(|s| s.temperature).fold(0.0, f64::max);
    let temperature = if (t_max - t_min) <= SAME_TEMPERATURE * t_max {
        t_max
    } else if let (Phase::Liquid, Some(_)) = (net.phase, heat.balance().and_then(|e| e.mixture_cp))
    {
        // One ρ c_p per volume: the volume-weighted mean.
        streams
            .iter()
            .map(|s| s.volumetric * s.temperature)
            .sum::<f64>()
            / streams.iter().map(|s| s.volumetric).sum::<f64>()
    } else {
        mixed_temperature(net, streams, t_min, t_max)?
    };
    Ok(combine(net, streams, temperature))
}

/// Streams combined at a given temperature (the mixture's, or the one an isothermal vessel
/// holds) and the pressure of the first: species add; the volumetric flow is the sum for a
/// liquid and F_T R T / P for an ideal gas.
pub fn combine(net: &Network, streams: &[&Feed], temperature: f64) -> Feed {
    let mut amounts = vec![0.0; net.species.len()];
    for s in streams {
        for (a, f) in amounts.iter_mut().zip(&s.amounts) {
            *a += f;
        }
    }
    let pressure = streams[0].pressure;
    let volumetric = match net.phase {
        Phase::Liquid => streams.iter().map(|s| s.volumetric).sum(),
        Phase::Gas => amounts.iter().sum::<f64>() * GAS_CONSTANT * temperature / pressure,
    };
    Feed {
        temperature,
        pressure,
        amounts,
        volumetric,
    }
}

/// T of the mixture from the species' heat capacities: Newton on
/// H(T) = Σ_s Σ_j F_sj ∫_{T_s}^{T} Cp_j dT = 0, which is monotone (Cp > 0) with its root
/// between the coldest and the hottest stream.
fn mixed_temperature(
    net: &Network,
    streams: &[&Feed],
    t_min: f64,
    t_max: f64,
) -> Result<f64, String> {
    let present: Vec<usize> = (0..net.species.len())
        .filter(|&j| streams.iter().any(|s| s.amounts[j] > 0.0))
        .collect();
    let missing: Vec<&str> = present
        .iter()
        .filter(|&&j| net.species[j].thermo.cp.is_none())
        .map(|&j| net.species[j].name.as_str())
        .collect();
    if !missing.is_empty() {
        return Err(format!(
            "streams at {t_min:.2} K and {t_max:.2} K meet and the mixture's temperature needs the heat capacity `cp` of {}",
            missing
                .iter()
                .map(|n| format!("`{n}`"))
                .collect::<Vec<_>>()
                .join(", ")
        ));
    }
    let h = |t: f64| -> (f64, f64) {
        let mut value = 0.0;
        let mut slope = 0.0;
        for s in streams {
            for &j in &present {
                let f = s.amounts[j];
                if f == 0.0 {
                    continue;
                }
                let cp = net.species[j].thermo.cp.as_ref().expect("checked above");
                value += f * cp.enthalpy_change(s.temperature, t);
                slope += f * cp.cp(t);
            }
        }
        (value, slope)
    };
    // Newton from the flow-weighted mean, kept inside [t_min, t_max] (bisection when a step
    // leaves it).
    let total: f64 = streams.iter().map(|s| s.amounts.iter().sum::<f64>()).sum();
    let mut t = streams
        .iter()
        .map(|s| s.amounts.iter().sum::<f64>() * s.temperature)
        .sum::<f64>()
        / total;
    let (mut lo, mut hi) = (t_min, t_max);
    for _ in 0..100 {
        let (v, d) = h(t);
        if v > 0.0 {
            hi = t;
        } else {
            lo = t;
        }
        let mut next = t - v / d;
        if !(next > lo && next < hi && d > 0.0) {
            next = 0.5 * (lo + hi);
        }
        if (next - t).abs() <= 1e-12 * t {
            return Ok(next);
        }
        t = next;
    }
    Ok(t)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::load_str;

    fn study(phase: &str, cp: &str) -> Network {
        let v = if phase == "liquid" {
            ", volumetric: 1 L/s"
        } else {
            ""
        };
        load_str(
            &format!(
                "name: t\nphase: {phase}\nspecies: {{A: {{cp: {cp}}}, B: {{cp: 2 J/(mol*K)}}}}\nreactions: [{{id: r, stoich: A -> B, rate: {{k: 1 1/s}}}}]\nfeed: {{T: 300 K, P: 1 bar, flows: {{A: 1 mol/s}}{v}}}\nreactor: {{type: pfr, volume: 1 L}}\n"
            ),
            "t",
            &[],
        )
        .unwrap()
    }

    fn stream(t: f64, a: f64, b: f64, v: f64) -> Feed {
        Feed {
            temperature: t,
            pressure: 1e5,
            amounts: vec![a, b],
            volumetric: v,
        }
    }

    /// Constant Cp: T = Σ F Cp T / Σ F Cp (common practice).
    #[test]
    fn constant_heat_capacities_give_the_capacity_weighted_mean() {
        let net = study("liquid", "1 J/(mol*K)");
        let m = mix(
            &net,
            &Heat::Isothermal,
            &[
                &stream(300.0, 1.0, 0.0, 1e-3),
                &stream(400.0, 0.0, 1.0, 2e-3),
            ],
        )
        .unwrap();
        let expect = (1.0 * 300.0 + 2.0 * 400.0) / 3.0;
        assert!((m.temperature - expect).abs() < 1e-9, "{}", m.temperature);
        assert!((m.volumetric - 3e-3).abs() < 1e-15);
        assert_eq!(m.amounts, vec![1.0, 1.0]);
    }

    /// Two ideal gases of constant Cp: T = Σ F Cp T / Σ F Cp and v = F_T R T / P.
    #[test]
    fn a_gas_mixture_follows_the_ideal_gas_and_the_enthalpy_balance() {
        let net = study("gas", "1 J/(mol*K)");
        let m = mix(
            &net,
            &Heat::Isothermal,
            &[&stream(300.0, 2.0, 0.0, 0.0), &stream(600.0, 0.0, 1.0, 0.0)],
        )
        .unwrap();
        // 2·1·(T − 300) + 1·2·(T − 600) = 0 → T = 450 K.
        assert!((m.temperature - 450.0).abs() < 1e-9);
        let v = 3.0 * GAS_CONSTANT * 450.0 / 1e5;
        assert!((m.volumetric - v).abs() < 1e-12 * v);
    }

    #[test]
    fn streams_at_different_temperatures_without_heat_capacities_are_refused() {
        let mut net = study("liquid", "1 J/(mol*K)");
        net.species[1].thermo.cp = None;
        let e = mix(
            &net,
            &Heat::Isothermal,
            &[
                &stream(300.0, 1.0, 0.0, 1e-3),
                &stream(350.0, 0.0, 1.0, 1e-3),
            ],
        )
        .unwrap_err();
        assert!(e.contains("`B`"), "{e}");
        // At one temperature no data are needed.
        let m = mix(
            &net,
            &Heat::Isothermal,
            &[
                &stream(300.0, 1.0, 0.0, 1e-3),
                &stream(300.0, 0.0, 1.0, 1e-3),
            ],
        )
        .unwrap();
        assert_eq!(m.temperature, 300.0);
    }
}
