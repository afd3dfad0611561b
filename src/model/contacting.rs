//! How the reactants are brought together: everything that enters or leaves a vessel besides
//! its inlet and outlet (side feeds, a feed distributed along a tube, a membrane wall, dosing
//! and withdrawal of a semibatch, a recycle around a tube), and a train of vessels in series.
//!
//! These are the contacting patterns that decide the selectivity of a multiple-reaction
//! network (keep one reactant low by dosing it or feeding it along the tube, stage the
//! conversion, recycle, take a product out through the wall; Levenspiel, Chemical Reaction
//! Engineering, 3rd ed., ch. 6–7). All values are SI. A study without any of them has an empty
//! [`Contacting`] and no [`Train`], and runs exactly as a single vessel.

use super::{Feed, Heat, Reactor};

/// A piecewise-linear function of the reactor coordinate x (time of a batch, V or W of a tube),
/// through its points (x_k, value_k) with x ascending; zero outside [x_first, x_last].
///
/// It shapes a dosing rate over time or a distributed feed along a tube. A constant rate over
/// a window [a, b] is the two points (a, q), (b, q).
#[derive(Debug, Clone, PartialEq)]
pub struct Schedule {
    /// (x, value), x strictly ascending, at least two points.
    pub points: Vec<(f64, f64)>,
}

impl Schedule {
    /// A constant value over [from, to] (from < to).
    pub fn constant(from: f64, to: f64, value: f64) -> Schedule {
        Schedule {
            points: vec![(from, value), (to, value)],
        }
    }

    /// The value at x (linear between points, zero outside).
    pub fn value(&self, x: f64) -> f64 {
        let p = &self.points;
        if p.is_empty() || x < p[0].0 || x > p[p.len() - 1].0 {
            return 0.0;
        }
        let k = p.partition_point(|&(xk, _)| xk <= x).clamp(1, p.len() - 1);
        let ((x0, v0), (x1, v1)) = (p[k - 1], p[k]);
        if x1 == x0 {
            return v1;
        }
        v0 + (v1 - v0) * (x - x0) / (x1 - x0)
    }

    /// ∫ value dx from a to b (a ≤ b), exact for the piecewise-linear shape (trapezoids).
    pub fn integral(&self, a: f64, b: f64) -> f64 {
        if b <= a {
            return 0.0;
        }
        let p = &self.points;
        let mut sum = 0.0;
        for w in p.windows(2) {
            let (lo, hi) = (w[0].0.max(a), w[1].0.min(b));
            if hi > lo {
                sum += 0.5 * (self.value_on(w, lo) + self.value_on(w, hi)) * (hi - lo);
            }
        }
        sum
    }

    /// The total ∫ value dx over the whole schedule.
    pub fn total(&self) -> f64 {
        match (self.points.first(), self.points.last()) {
            (Some(a), Some(b)) => self.integral(a.0, b.0),
            _ => 0.0,
        }
    }

    /// The points where the value's slope changes (where an integrator should not step over).
    pub fn breakpoints(&self) -> impl Iterator<Item = f64> + '_ {
        self.points.iter().map(|p| p.0)
    }

    fn value_on(&self, w: &[(f64, f64)], x: f64) -> f64 {
        let ((x0, v0), (x1, v1)) = (w[0], w[1]);
        if x1 == x0 {
            v1
        } else {
            v0 + (v1 - v0) * (x - x0) / (x1 - x0)
        }
    }
}

/// A stream injected at one point along a tube (V or W): it mixes with the reacting stream
/// there, species, volume and enthalpy.
#[derive(Debug, Clone)]
pub struct SideFeed {
    /// Position along the tube (V in m3, W in kg), strictly inside (0, size).
    pub at: f64,
    /// The stream: flows F_j (mol/s), volumetric flow (m3/s), temperature and pressure.
    pub stream: Feed,
}

/// A stream spread along a stretch of a tube: species j enters at
/// f_j(x) = F_j,side · w(x) / ∫w, per unit of x, with w the shape (uniform when not given).
#[derive(Debug, Clone)]
pub struct DistributedFeed {
    /// The whole stream over the stretch: flows F_j (mol/s), volumetric flow (m3/s), T.
    pub stream: Feed,
    /// Where it enters and with what relative intensity: a [`Schedule`] over x whose integral
    /// is normalised to 1 when the feed is set up (uniform: two points of equal value).
    pub shape: Schedule,
}

impl DistributedFeed {
    /// The fraction of the stream that has entered by x.
    pub fn fraction_by(&self, x: f64) -> f64 {
        let total = self.shape.total();
        if total > 0.0 {
            self.shape.integral(self.shape.points[0].0, x) / total
        } else {
            0.0
        }
    }
}

/// One species crossing a tube's wall: a flux per unit of x of k_m (C_j − C_j,sweep), out of
/// the reacting stream when positive (a product removed), into it when negative (a reactant
/// fed through the wall).
#[derive(Debug, Clone)]
pub struct Permeation {
    pub species: usize,
    /// Transport coefficient k_m per unit of x: 1/s per volume of a tube (m3/(m3 s)), or
    /// m3/(kg s) per catalyst mass of a packed bed.
    pub coefficient: f64,
    /// Concentration on the sweep side, mol/m3 (0: a perfect sweep or vacuum).
    pub sweep: f64,
}

/// A liquid dosed into a batch (semibatch operation): its composition and temperature, with a
/// volumetric rate that follows a [`Schedule`] in time; species j enters at C_j,dose q(t).
#[derive(Debug, Clone)]
pub struct Dosing {
    /// Concentrations of the dosed liquid, mol/m3, per species.
    pub concentrations: Vec<f64>,
    /// Temperature of the dosed liquid, K.
    pub temperature: f64,
    /// Volumetric dosing rate q(t), m3/s.
    pub rate: Schedule,
}

/// Continuous withdrawal from a semibatch: the contents leave at the volumetric rate q(t)
/// (m3/s), at the vessel's composition.
#[derive(Debug, Clone)]
pub struct Withdrawal {
    pub rate: Schedule,
}

/// Everything a vessel exchanges besides its inlet and outlet. Empty for a plain vessel.
#[derive(Debug, Clone, Default)]
pub struct Contacting {
    /// Tubes: streams injected at points along the length (ascending `at`).
    pub side_feeds: Vec<SideFeed>,
    /// Tubes: streams spread over a stretch of the length.
    pub distributed: Vec<DistributedFeed>,
    /// Tubes: species crossing the wall.
    pub membrane: Vec<Permeation>,
    /// Batch: dosing streams (semibatch).
    pub dosing: Vec<Dosing>,
    /// Batch: continuous withdrawal of the contents.
    pub withdrawal: Option<Withdrawal>,
    /// Tubes: the recycle ratio R (volume returned to the inlet / volume leaving).
    pub recycle: Option<f64>,
}

impl Contacting {
    /// Mark the species that enter by a side route: side, distributed and dosed streams, and
    /// the wall where the sweep side holds the species.
    pub fn mark_entering(&self, fed: &mut [bool]) {
        let mut mark = |amounts: &[f64]| {
            for (f, a) in fed.iter_mut().zip(amounts) {
                *f |= *a > 0.0;
            }
        };
        for s in &self.side_feeds {
            mark(&s.stream.amounts);
        }
        for d in &self.distributed {
            mark(&d.stream.amounts);
        }
        for d in &self.dosing {
            if d.rate.total() > 0.0 {
                mark(&d.concentrations);
            }
        }
        for p in &self.membrane {
            if p.sweep > 0.0 {
                fed[p.species] = true;
            }
        }
    }

    /// Move the side feeds along a tube whose length is scaled by `factor`: each keeps its
    /// fraction of the way along. (A tube with walls is not resized: its stretches are fixed
    /// as written, `studies::conversion::refuse_walls`.)
    pub fn scale_positions(&mut self, factor: f64) {
        for s in &mut self.side_feeds {
            s.at *= factor;
        }
    }

    /// Whether the vessel is plain (nothing enters or leaves but its inlet and outlet).
    pub fn is_empty(&self) -> bool {
        self.side_feeds.is_empty()
            && self.distributed.is_empty()
            && self.membrane.is_empty()
            && self.dosing.is_empty()
            && self.withdrawal.is_none()
            && self.recycle.is_none()
    }
}

/// One vessel of a train.
#[derive(Debug, Clone)]
pub struct Unit {
    /// The unit's `id` in the file (`R1`, `tank2`, ...).
    pub id: String,
    pub reactor: Reactor,
    pub heat: Heat,
    pub contacting: Contacting,
    /// A feed that joins the stream just before this unit (a mixing point).
    pub join: Option<Feed>,
    /// The fraction of the stream arriving at this unit (after `join`) that goes around it and
    /// rejoins its outlet.
    pub bypass: f64,
}

/// Vessels in series, the outlet of one the inlet of the next.
#[derive(Debug, Clone)]
pub struct Train {
    pub units: Vec<Unit>,
}
