//! What a design study maximises: an outlet amount, a yield, a selectivity or the conversion.
//!
//! Written on the command line as `B` (outlet flow, or moles for a batch), `yield:B`,
//! `selectivity:B/C` or `conversion`. Each target gives its value at a state and the sign of
//! its derivative along the reactor, d(value)/dx = ∇value · dy/dx, so the optimum along a PFR,
//! packed bed or batch can be located as a root of that derivative (quotient rule for the ratios).

use crate::metrics::yield_ratio;
use crate::model::Network;

#[derive(Debug, Clone, PartialEq)]
pub enum Target {
    /// Outlet flow (mol/s) or moles (batch) of a species.
    Amount(usize),
    /// Yield of a species on the key reactant consumed (metrics definition).
    Yield(usize),
    /// Overall selectivity (F_D − F_D0)/(F_U − F_U0).
    Selectivity(usize, usize),
    /// Conversion of the key reactant.
    Conversion,
}

impl Target {
    /// Parse a target against the network's species.
    pub fn parse(s: &str, net: &Network) -> Result<Target, String> {
        let sp = |name: &str| -> Result<usize, String> {
            net.species_index(name.trim()).ok_or_else(|| {
                let names: Vec<&str> = net.species.iter().map(|s| s.name.as_str()).collect();
                match crate::model::closest_name(name.trim(), &names) {
                    Some(c) => format!(
                        "unknown species `{}` in the target (did you mean `{c}`?)",
                        name.trim()
                    ),
                    None => format!("unknown species `{}` in the target", name.trim()),
                }
            })
        };
        let s = s.trim();
        if s == "conversion" {
            return Ok(Target::Conversion);
        }
        // A yield or selectivity is defined for products only (metrics module): refuse the
        // others here rather than optimise a number without meaning.
        let product = |j: usize, what: &str| -> Result<usize, String> {
            let name = &net.species[j].name;
            if j == net.key {
                Err(format!(
                    "`{s}`: `{name}` is the key reactant; {what} of the key on itself is not defined (maximise `conversion` instead)"
                ))
            } else if !net.reactions.iter().any(|r| r.nu(j) > 0.0) {
                Err(format!(
                    "`{s}`: `{name}` is made by no reaction, so its {what} is not defined"
                ))
            } else {
                Ok(j)
            }
        };
        if let Some(rest) = s.strip_prefix("yield:") {
            return Ok(Target::Yield(product(sp(rest)?, "yield")?));
        }
        if let Some(rest) = s.strip_prefix("selectivity:") {
            let (d, u) = rest
                .split_once('/')
                .ok_or_else(|| format!("`{s}`: a selectivity target is `selectivity:D/U`"))?;
            let (d, u) = (
                product(sp(d)?, "selectivity")?,
                product(sp(u)?, "selectivity")?,
            );
            if d == u {
                return Err(format!(
                    "`{s}`: the two species of a selectivity must differ"
                ));
            }
            return Ok(Target::Selectivity(d, u));
        }
        if s.contains(':') {
            return Err(format!(
                "`{s}`: a target is a species (its outlet amount), `yield:B`, `selectivity:B/C` or `conversion`"
            ));
        }
        Ok(Target::Amount(sp(s)?))
    }

    /// A short label, e.g. `yield:B`.
    pub fn label(&self, net: &Network) -> String {
        let n = |j: usize| net.species[j].name.clone();
        match self {
            Target::Amount(j) => n(*j),
            Target::Yield(j) => format!("yield:{}", n(*j)),
            Target::Selectivity(d, u) => format!("selectivity:{}/{}", n(*d), n(*u)),
            Target::Conversion => "conversion".into(),
        }
    }

    fn factor(net: &Network, j: usize) -> f64 {
        yield_ratio(net, j).map(|(_, k)| k).unwrap_or(1.0)
    }

    /// The value at a state (None where a ratio is undefined: nothing consumed or formed).
    pub fn value(&self, net: &Network, y: &[f64]) -> Option<f64> {
        let f0 = &net.feed.amounts;
        let a = net.key;
        match *self {
            Target::Amount(j) => Some(y[j]),
            Target::Conversion => (f0[a] > 0.0).then(|| (f0[a] - y[a]) / f0[a]),
            // The metrics' rules: None wherever `run` reports the figure as not defined.
            Target::Yield(j) => {
                let total = net.feed.total();
                let made = crate::metrics::formed(y[j] - f0[j], total);
                let consumed = crate::metrics::formed(f0[a] - y[a], total);
                crate::metrics::yield_value(net, j, made, consumed, Self::factor(net, j)).0
            }
            Target::Selectivity(d, u) => {
                let total = net.feed.total();
                crate::metrics::selectivity_value(
                    &net.species[d].name,
                    &net.species[u].name,
                    crate::metrics::formed(y[d] - f0[d], total),
                    crate::metrics::formed(y[u] - f0[u], total),
                )
                .0
            }
        }
    }

    /// A quantity with the sign of d(value)/dx, given dy/dx (the numerator of the quotient
    /// rule for the ratios, whose denominators are squares).
    pub fn slope_sign(&self, net: &Network, y: &[f64], dydx: &[f64]) -> f64 {
        let f0 = &net.feed.amounts;
        let a = net.key;
        match *self {
            Target::Amount(j) => dydx[j],
            Target::Conversion => -dydx[a],
            Target::Yield(j) => {
                // Y ∝ m/c with m = y_j − y_j0, c = y_A0 − y_A: d/dx ∝ m' c − m c', c' = −y_A'.
                let (m, c) = (y[j] - f0[j], f0[a] - y[a]);
                dydx[j] * c + m * dydx[a]
            }
            Target::Selectivity(d, u) => {
                let (md, mu) = (y[d] - f0[d], y[u] - f0[u]);
                dydx[d] * mu - md * dydx[u]
            }
        }
    }
}
