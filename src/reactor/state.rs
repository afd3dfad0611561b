//! The state layout of a reactor model: what each entry of the state vector is, named and
//! with its unit, so reports, tolerances and error messages read the state by meaning rather
//! than by position.

use crate::model::Network;

/// What one entry of the state vector holds.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum StateKind {
    /// The molar flow F_j (flow reactors, mol/s) or the amount N_j (batch, mol) of species j.
    Species(usize),
    /// The pressure ratio p = P/P0 of a packed bed with pressure drop (dimensionless).
    PressureRatio,
    /// The temperature of the reacting mixture (K), when the model has an energy balance.
    Temperature,
    /// The temperature of a coolant stream along a tube (K).
    CoolantTemperature,
    /// The cumulative net flux of species j through a tube's membrane wall, ∫ k_m (C_j −
    /// C_j,sweep) dx from the inlet (mol/s; positive out of the tube), present only with a
    /// membrane ([`super::walls`]).
    Permeate(usize),
    /// The amount of species j withdrawn from a semibatch so far (mol), ∫ q_out N_j / V dt.
    Withdrawn(usize),
}

/// One entry of the state vector.
#[derive(Debug, Clone, PartialEq)]
pub struct StateVar {
    pub kind: StateKind,
    /// Name for reports, e.g. `F_A`, `N_A` or `P/P0`.
    pub name: String,
    /// SI unit of the entry, e.g. `mol/s`.
    pub unit: &'static str,
}

/// The state vector of a model: species first (in the network's order), then the other
/// states of the model.
#[derive(Debug, Clone, PartialEq)]
pub struct StateLayout {
    vars: Vec<StateVar>,
    n_species: usize,
}

impl StateLayout {
    /// The species of the network as flows (flow reactors) or amounts (batch), then `extra`.
    pub fn new(net: &Network, extra: &[StateKind]) -> StateLayout {
        let batch = net.reactor.is_batch();
        let (prefix, unit) = if batch { ("N", "mol") } else { ("F", "mol/s") };
        let mut vars: Vec<StateVar> = net
            .species
            .iter()
            .enumerate()
            .map(|(j, s)| StateVar {
                kind: StateKind::Species(j),
                name: format!("{prefix}_{}", s.name),
                unit,
            })
            .collect();
        for kind in extra {
            vars.push(match kind {
                StateKind::Species(_) => unreachable!("species come first, from the network"),
                StateKind::PressureRatio => StateVar {
                    kind: *kind,
                    name: "P/P0".into(),
                    unit: "1",
                },
                StateKind::Temperature => StateVar {
                    kind: *kind,
                    name: "T".into(),
                    unit: "K",
                },
                StateKind::CoolantTemperature => StateVar {
                    kind: *kind,
                    name: "T_a".into(),
                    unit: "K",
                },
                StateKind::Permeate(j) => StateVar {
                    kind: *kind,
                    name: format!("Q_{}", net.species[*j].name),
                    unit: "mol/s",
                },
                StateKind::Withdrawn(j) => StateVar {
                    kind: *kind,
                    name: format!("withdrawn_{}", net.species[*j].name),
                    unit: "mol",
                },
            });
        }
        StateLayout {
            vars,
            n_species: net.species.len(),
        }
    }

    /// Number of entries.
    pub fn len(&self) -> usize {
        self.vars.len()
    }

    pub fn is_empty(&self) -> bool {
        self.vars.is_empty()
    }

    /// Number of species entries (the first ones).
    pub fn n_species(&self) -> usize {
        self.n_species
    }

    /// The entries in order.
    pub fn vars(&self) -> &[StateVar] {
        &self.vars
    }

    /// Position of the entry of this kind, if the model has one.
    pub fn index_of(&self, kind: StateKind) -> Option<usize> {
        match kind {
            StateKind::Species(j) => (j < self.n_species).then_some(j),
            _ => self.vars[self.n_species..]
                .iter()
                .position(|v| v.kind == kind)
                .map(|k| k + self.n_species),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::load_str;

    #[test]
    fn species_first_then_pressure() {
        let net = load_str(
            "name: t\nspecies: {A: {}, B: {}}\nphase: gas\nreactions:\n  - {id: r1, stoich: A -> B, rate: {k: 0.2 m3/(kg*s)}}\nfeed: {T: 500 K, P: 5 bar, flows: {A: 1 mol/s}}\nreactor: {type: pbr, catalyst: 10 kg, pressure_drop: {alpha: 0.01 1/kg}}\n",
            "t",
            &[],
        )
        .unwrap();
        let l = StateLayout::new(&net, &[StateKind::PressureRatio]);
        assert_eq!(l.len(), 3);
        assert_eq!(l.vars()[0].name, "F_A");
        assert_eq!(l.vars()[1].unit, "mol/s");
        assert_eq!(l.index_of(StateKind::PressureRatio), Some(2));
        assert_eq!(l.index_of(StateKind::Species(1)), Some(1));
        assert_eq!(l.vars()[2].name, "P/P0");
    }
}
