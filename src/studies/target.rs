//! What a design study maximises: an outlet amount, a yield, a selectivity or the conversion.
//!
//! Written on the command line as `B` (outlet flow, or moles for a batch), `yield:B`,
//! `selectivity:B/C` (B over one other product, `run`'s S_B/C), `selectivity:B/all` (B over all
//! other products together, `compare`'s column) or `conversion`. Each target gives its value at a state and the sign of
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
    /// Overall selectivity (F_D − F_D0)/(F_U − F_U0), as `run` reports it for each U.
    Selectivity(usize, usize),
    /// Overall selectivity over all other products: (F_D − F_D0)/Σ_U (F_U − F_U0), U every
    /// product (metrics::products) other than D.
    SelectivityAll(usize),
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
            let (d, u) = rest.split_once('/').ok_or_else(|| {
                format!("`{s}`: a selectivity target is `selectivity:D/U` or `selectivity:D/all`")
            })?;
            if u.trim() == "all" {
                if net.species_index("all").is_some() {
                    return Err(format!(
                        "`{s}`: `all` means every other product here, but a species is named `all`; rename it"
                    ));
                }
                let d = product(sp(d)?, "selectivity")?;
                if others(net, d).is_empty() {
                    return Err(format!(
                        "`{s}`: {} is the only product, so there is no other product to compare it with",
                        net.species[d].name
                    ));
                }
                return Ok(Target::SelectivityAll(d));
            }
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
                "`{s}`: a target is a species (its outlet amount), `yield:B`, `selectivity:B/C`, `selectivity:B/all` or `conversion`"
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
            Target::SelectivityAll(d) => format!("selectivity:{}/all", n(*d)),
            Target::Conversion => "conversion".into(),
        }
    }

    /// True for the ratios (yield, selectivity), which are 0/0 at zero size.
    pub fn is_ratio(&self) -> bool {
        matches!(
            self,
            Target::Yield(_) | Target::Selectivity(..) | Target::SelectivityAll(_)
        )
    }

    /// The limit of the value as the reactor size goes to zero, from the state `y0` at the
    /// inlet (or the charge) and the rates of change there, `d` = dy/dx at x = 0. For a ratio
    /// m(x)/c(x) with m(0) = c(0) = 0 the limit is m'(0)/c'(0) (l'Hôpital's rule; common
    /// practice); a PFR, a batch and a CSTR share it, since dF/dV = f(F_0) at V = 0 for each.
    pub fn limit_at_zero_size(&self, net: &Network, y0: &[f64], d: &[f64]) -> Limit {
        let a = net.key;
        let scale = d.iter().fold(0.0f64, |m, v| m.max(v.abs())) * 1e-12;
        let ratio = |num: f64, den: f64| -> Limit {
            if den.abs() > scale && den != 0.0 {
                Limit::Value(num / den)
            } else if num > scale && den.abs() <= scale {
                Limit::PlusInfinity
            } else {
                Limit::Undefined
            }
        };
        match *self {
            Target::Amount(j) => Limit::Value(y0[j]),
            Target::Conversion => Limit::Value(0.0),
            Target::Yield(j) => match ratio(d[j] * Self::factor(net, j), -d[a]) {
                // A yield whose denominator is not consumed at the inlet has no limit there.
                Limit::PlusInfinity => Limit::Undefined,
                l => l,
            },
            Target::Selectivity(dd, u) => ratio(d[dd], d[u]),
            Target::SelectivityAll(dd) => {
                let s: f64 = others(net, dd).iter().map(|&u| d[u]).sum();
                ratio(d[dd], s)
            }
        }
    }

    fn factor(net: &Network, j: usize) -> f64 {
        yield_ratio(net, j).map(|(_, k)| k).unwrap_or(1.0)
    }

    /// The value at a state (None where a ratio is undefined: nothing consumed or formed).
    pub fn value(&self, net: &Network, y: &[f64]) -> Option<f64> {
        self.value_against(net, &net.feed.amounts, y)
    }

    /// The value of what left (`y`: outlet with side routes out) against everything fed
    /// (`f0`: feed with side feeds, joins, dosing), as [`crate::metrics::compute_against`].
    pub fn value_against(&self, net: &Network, f0: &[f64], y: &[f64]) -> Option<f64> {
        let a = net.key;
        let feed_total: f64 = f0.iter().sum();
        match *self {
            Target::Amount(j) => Some(y[j]),
            Target::Conversion => (f0[a] > 0.0).then(|| (f0[a] - y[a]) / f0[a]),
            // The metrics' rules: None wherever `run` reports the figure as not defined.
            Target::Yield(j) => {
                let total = feed_total;
                let made = crate::metrics::formed(y[j] - f0[j], total);
                let consumed = crate::metrics::formed(f0[a] - y[a], total);
                crate::metrics::yield_value(net, f0[a], j, made, consumed, Self::factor(net, j)).0
            }
            Target::Selectivity(d, u) => {
                let total = feed_total;
                crate::metrics::selectivity_value(
                    &net.species[d].name,
                    &net.species[u].name,
                    crate::metrics::formed(y[d] - f0[d], total),
                    crate::metrics::formed(y[u] - f0[u], total),
                )
                .0
            }
            Target::SelectivityAll(d) => crate::metrics::selectivity_over_all(net, d, f0, y),
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
            Target::SelectivityAll(d) => {
                let o = others(net, d);
                let mu: f64 = o.iter().map(|&u| y[u] - f0[u]).sum();
                let du: f64 = o.iter().map(|&u| dydx[u]).sum();
                dydx[d] * mu - (y[d] - f0[d]) * du
            }
        }
    }
}

/// The value a target approaches as the reactor size goes to zero.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Limit {
    Value(f64),
    /// A selectivity whose other product is not formed at the inlet grows without bound.
    PlusInfinity,
    /// Nothing is formed or consumed at the inlet: the limit is not defined by the rates there.
    Undefined,
}

/// The products other than `d` (metrics::products, the species a reaction makes).
pub fn others(net: &Network, d: usize) -> Vec<usize> {
    crate::metrics::products(net)
        .into_iter()
        .filter(|&u| u != d)
        .collect()
}
