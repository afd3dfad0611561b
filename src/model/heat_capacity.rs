//! Species thermodynamic data as the study gives them: heat capacity, enthalpy and entropy of each species, in the
//! published forms the data come in.
//!
//! A heat capacity is a constant, the Shomate form tabulated in the NIST Chemistry WebBook, or
//! the 7-coefficient polynomials of NASA's thermodynamic tables (McBride, Zehe & Gordon,
//! NASA/TP-2002-211556, from memory):
//!
//! ```text
//! Shomate, t = T/1000:  Cp = A + B t + C t² + D t³ + E/t²                     J/(mol K)
//!                       H(T) − H(298.15) = A t + B t²/2 + C t³/3 + D t⁴/4 − E/t + F − H   kJ/mol
//!                       S(T) = A ln t + B t + C t²/2 + D t³/3 − E/(2 t²) + G               J/(mol K)
//! NASA 7:               Cp/R = a1 + a2 T + a3 T² + a4 T³ + a5 T⁴
//!                       H/(R T) = a1 + a2 T/2 + a3 T²/3 + a4 T³/4 + a5 T⁴/5 + a6/T
//!                       S/R = a1 ln T + a2 T + a3 T²/2 + a4 T³/3 + a5 T⁴/4 + a7
//! ```
//!
//! The energy balances need only Cp(T), its slope and the sensible enthalpy ∫Cp dT from a fixed
//! origin ([`T_STANDARD`]); enthalpies of reaction add a constant per reaction.

//! The model owns these data types (the study file states them, the loader checks them);
//! what follows from them for a reaction of a network is in [`crate::thermo`], so the imports
//! run one way, model before thermo.

use crate::units::GAS_CONSTANT;

/// The standard reference temperature of formation data, 298.15 K (common practice).
pub const T_STANDARD: f64 = 298.15;

/// A polynomial whose range starts at or below this temperature (K) is taken to hold at
/// 298.15 K: published sets often start at 300 K, and 1.85 K of extrapolation is well within
/// their fit (common practice).
pub const T_COVERS_STANDARD: f64 = 300.0;

/// The molar heat capacity of one species at constant pressure.
#[derive(Debug, Clone, PartialEq)]
pub enum HeatCapacity {
    /// Cp in J/(mol K), the same at every temperature.
    Constant(f64),
    /// Shomate coefficients A..H (NIST units: J/(mol K) with t = T/1000, F and H in kJ/mol)
    /// and the range (K) they were fitted over.
    Shomate { c: [f64; 8], range: (f64, f64) },
    /// NASA 7-coefficient polynomials below and above `t_mid` (K), and the range (K).
    Nasa7 {
        low: [f64; 7],
        high: [f64; 7],
        t_mid: f64,
        range: (f64, f64),
    },
}

impl HeatCapacity {
    /// The NASA coefficients that hold at T (low below `t_mid`, high from it).
    fn nasa_piece<'a>(low: &'a [f64; 7], high: &'a [f64; 7], t_mid: f64, t: f64) -> &'a [f64; 7] {
        if t < t_mid { low } else { high }
    }

    /// Cp at T, J/(mol K).
    pub fn cp(&self, t: f64) -> f64 {
        match self {
            HeatCapacity::Constant(cp) => *cp,
            HeatCapacity::Shomate { c, .. } => {
                let s = t / 1000.0;
                c[0] + s * (c[1] + s * (c[2] + s * c[3])) + c[4] / (s * s)
            }
            HeatCapacity::Nasa7 {
                low, high, t_mid, ..
            } => {
                let a = Self::nasa_piece(low, high, *t_mid, t);
                GAS_CONSTANT * (a[0] + t * (a[1] + t * (a[2] + t * (a[3] + t * a[4]))))
            }
        }
    }

    /// dCp/dT at T, J/(mol K²).
    pub fn dcp_dt(&self, t: f64) -> f64 {
        match self {
            HeatCapacity::Constant(_) => 0.0,
            HeatCapacity::Shomate { c, .. } => {
                let s = t / 1000.0;
                (c[1] + s * (2.0 * c[2] + 3.0 * s * c[3]) - 2.0 * c[4] / (s * s * s)) / 1000.0
            }
            HeatCapacity::Nasa7 {
                low, high, t_mid, ..
            } => {
                let a = Self::nasa_piece(low, high, *t_mid, t);
                GAS_CONSTANT * (a[1] + t * (2.0 * a[2] + t * (3.0 * a[3] + 4.0 * t * a[4])))
            }
        }
    }

    /// The sensible enthalpy, an antiderivative of Cp (J/mol) continuous in T: its differences
    /// give ∫_{T1}^{T2} Cp dT exactly, across a NASA `t_mid` too. Zero at [`T_STANDARD`] for a
    /// constant Cp; for the polynomial forms its origin is the form's own (Shomate:
    /// 1000 (A t + B t²/2 + C t³/3 + D t⁴/4 − E/t); NASA: the low polynomial's H(T) − a6 R,
    /// continued above `t_mid` by the high one's increase from `t_mid`), a fixed constant away
    /// from ∫_{298.15}^{T} Cp dT.
    pub fn sensible(&self, t: f64) -> f64 {
        match self {
            HeatCapacity::Constant(cp) => cp * (t - T_STANDARD),
            HeatCapacity::Shomate { c, .. } => {
                let s = t / 1000.0;
                1000.0
                    * (s * (c[0] + s * (c[1] / 2.0 + s * (c[2] / 3.0 + s * c[3] / 4.0))) - c[4] / s)
            }
            HeatCapacity::Nasa7 {
                low, high, t_mid, ..
            } => {
                let p = |a: &[f64; 7], t: f64| {
                    GAS_CONSTANT
                        * t
                        * (a[0]
                            + t * (a[1] / 2.0
                                + t * (a[2] / 3.0 + t * (a[3] / 4.0 + t * a[4] / 5.0))))
                };
                if t < *t_mid {
                    p(low, t)
                } else {
                    p(high, t) - p(high, *t_mid) + p(low, *t_mid)
                }
            }
        }
    }

    /// An antiderivative of Cp/T (J/(mol K)), continuous in T: the entropy's temperature part.
    /// Shomate: A ln t + B t + C t²/2 + D t³/3 − E/(2 t²) (the form's S without G); NASA:
    /// R (a1 ln T + a2 T + a3 T²/2 + a4 T³/3 + a5 T⁴/4) of the low polynomial, continued
    /// above `t_mid` by the high one's increase; constant Cp: Cp ln(T/298.15).
    pub(crate) fn entropy_antiderivative(&self, t: f64) -> f64 {
        match self {
            HeatCapacity::Constant(cp) => cp * (t / T_STANDARD).ln(),
            HeatCapacity::Shomate { c, .. } => {
                let s = t / 1000.0;
                c[0] * s.ln() + s * (c[1] + s * (c[2] / 2.0 + s * c[3] / 3.0))
                    - c[4] / (2.0 * s * s)
            }
            HeatCapacity::Nasa7 {
                low, high, t_mid, ..
            } => {
                let q = |a: &[f64; 7], t: f64| {
                    GAS_CONSTANT
                        * (a[0] * t.ln()
                            + t * (a[1] + t * (a[2] / 2.0 + t * (a[3] / 3.0 + t * a[4] / 4.0))))
                };
                if t < *t_mid {
                    q(low, t)
                } else {
                    q(high, t) - q(high, *t_mid) + q(low, *t_mid)
                }
            }
        }
    }

    /// ∫_{298.15}^{T} Cp/T dT, J/(mol K): the change of entropy at constant pressure from
    /// [`T_STANDARD`] (dS = Cp dT/T, common practice).
    pub fn entropy_change(&self, t: f64) -> f64 {
        self.entropy_antiderivative(t) - self.entropy_antiderivative(T_STANDARD)
    }

    /// ∫_{T1}^{T2} Cp dT, J/mol (across a NASA `t_mid` the two pieces are summed).
    pub fn enthalpy_change(&self, t1: f64, t2: f64) -> f64 {
        self.sensible(t2) - self.sensible(t1)
    }

    /// H(T) − H(298.15) as the form itself defines it, J/mol: ∫_{298.15}^{T} Cp dT for a
    /// constant Cp and NASA polynomials; for the Shomate form NIST's
    /// 1000 (A t + B t²/2 + C t³/3 + D t⁴/4 − E/t + F − H), whose F carries the enthalpy
    /// gained between 298.15 K and the start of a range that begins higher (a Shomate set for
    /// 1000–2500 K is not extrapolated down to 298.15 K). It differs from
    /// [`Self::sensible`] by a constant ([`Self::enthalpy_offset`]).
    pub fn enthalpy_increment(&self, t: f64) -> f64 {
        self.sensible(t) + self.enthalpy_offset()
    }

    /// [`Self::enthalpy_increment`] − [`Self::sensible`], a constant, J/mol.
    pub fn enthalpy_offset(&self) -> f64 {
        match self {
            HeatCapacity::Constant(_) => 0.0,
            HeatCapacity::Shomate { c, .. } => 1000.0 * (c[5] - c[7]),
            HeatCapacity::Nasa7 { .. } => -self.sensible(T_STANDARD),
        }
    }

    /// Whether the form's own values at 298.15 K are data rather than an extrapolation: its
    /// range starts at or below [`T_COVERS_STANDARD`]. Always true for a constant.
    pub fn covers_standard(&self) -> bool {
        self.range().is_none_or(|(lo, _)| lo <= T_COVERS_STANDARD)
    }

    /// The standard enthalpy of formation at 298.15 K the form itself carries, J/mol: the
    /// Shomate H coefficient (kJ/mol, NIST's ΔfH° at 298.15 K) or the NASA H(298.15) (its a6
    /// term includes formation); none for a constant Cp.
    pub fn implied_h_f(&self) -> Option<f64> {
        match self {
            HeatCapacity::Constant(_) => None,
            HeatCapacity::Shomate { c, .. } => Some(1000.0 * c[7]),
            HeatCapacity::Nasa7 {
                low, high, t_mid, ..
            } => {
                let a = Self::nasa_piece(low, high, *t_mid, T_STANDARD);
                let t = T_STANDARD;
                Some(
                    GAS_CONSTANT
                        * (t * (a[0]
                            + t * (a[1] / 2.0
                                + t * (a[2] / 3.0 + t * (a[3] / 4.0 + t * a[4] / 5.0))))
                            + a[5]),
                )
            }
        }
    }

    /// The absolute standard entropy at 298.15 K and 1 bar the form itself carries,
    /// J/(mol K): the Shomate S(298.15) with its G term, or the NASA S(298.15) with its a7
    /// term; none for a constant Cp.
    pub fn implied_s(&self) -> Option<f64> {
        match self {
            HeatCapacity::Constant(_) => None,
            HeatCapacity::Shomate { c, .. } => Some(self.entropy_antiderivative(T_STANDARD) + c[6]),
            HeatCapacity::Nasa7 {
                low, high, t_mid, ..
            } => {
                let a = Self::nasa_piece(low, high, *t_mid, T_STANDARD);
                let t = T_STANDARD;
                Some(
                    GAS_CONSTANT
                        * (a[0] * t.ln()
                            + t * (a[1] + t * (a[2] / 2.0 + t * (a[3] / 3.0 + t * a[4] / 4.0)))
                            + a[6]),
                )
            }
        }
    }

    /// The temperature range (K) the data hold over; `None` for a constant.
    pub fn range(&self) -> Option<(f64, f64)> {
        match self {
            HeatCapacity::Constant(_) => None,
            HeatCapacity::Shomate { range, .. } | HeatCapacity::Nasa7 { range, .. } => Some(*range),
        }
    }

    /// The range (K) when T lies outside it (the polynomial is then extrapolated, and the
    /// caller warns); `None` inside it or for a constant Cp.
    pub fn outside_range(&self, t: f64) -> Option<(f64, f64)> {
        self.range().filter(|&(lo, hi)| !(lo..=hi).contains(&t))
    }
}

/// What the study gives of one species' thermodynamics.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct SpeciesThermo {
    /// Molar heat capacity at constant pressure.
    pub cp: Option<HeatCapacity>,
    /// Standard enthalpy of formation at 298.15 K, J/mol.
    pub h_f: Option<f64>,
    /// Absolute standard entropy at 298.15 K and 1 bar, J/(mol K). For a Shomate form whose
    /// range starts above 300 K this is the form's own value at 298.15 K (an extrapolation),
    /// which with the form gives the tabulated S(T) inside its range.
    pub s: Option<f64>,
}

impl SpeciesThermo {
    /// The absolute (formation-based) molar enthalpy at T, J/mol:
    /// H_j(T) = ΔfH°_j(298.15) + ∫_{298.15}^{T} Cp_j dT (Kirchhoff, common practice), the
    /// integral as the form defines it ([`HeatCapacity::enthalpy_increment`]). Needs H_f
    /// and cp.
    pub fn enthalpy(&self, t: f64) -> Option<f64> {
        Some(self.h_f? + self.cp.as_ref()?.enthalpy_increment(t))
    }

    /// The absolute standard molar entropy at T and 1 bar, J/(mol K):
    /// S°_j(T) = S°_j(298.15) + ∫_{298.15}^{T} Cp_j/T dT (common practice). Needs S and cp.
    pub fn entropy(&self, t: f64) -> Option<f64> {
        Some(self.s? + self.cp.as_ref()?.entropy_change(t))
    }

    /// The range (K) of the species' heat capacity when T lies outside it (a warning for the
    /// caller to collect: the polynomial is extrapolated there); `None` inside it, for a
    /// constant Cp, or without Cp.
    pub fn outside_range(&self, t: f64) -> Option<(f64, f64)> {
        self.cp.as_ref()?.outside_range(t)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The sensible enthalpy's differences against the trapezoid rule on Cp, and dCp/dT against
    /// central differences (common practice), for each form, across a NASA T_mid.
    #[test]
    fn forms_are_self_consistent() {
        let forms = [
            HeatCapacity::Constant(75.0),
            // Water vapour, NIST WebBook Shomate coefficients 500-1700 K (from memory).
            HeatCapacity::Shomate {
                c: [
                    30.092, 6.832514, 6.793435, -2.53448, 0.082139, -250.881, 223.3967, -241.8264,
                ],
                range: (500.0, 1700.0),
            },
            HeatCapacity::Nasa7 {
                low: [3.5, 1e-4, 2e-7, -1e-10, 1e-14, -1000.0, 4.0],
                high: [3.0, 1.2e-3, -4e-7, 6e-11, -3e-15, -900.0, 6.0],
                t_mid: 1000.0,
                range: (300.0, 3000.0),
            },
        ];
        for f in &forms {
            let (a, b) = (600.0, 1400.0);
            let n = 20_000;
            let h = (b - a) / n as f64;
            let trap: f64 = (0..n)
                .map(|k| 0.5 * h * (f.cp(a + k as f64 * h) + f.cp(a + (k + 1) as f64 * h)))
                .sum();
            let exact = f.enthalpy_change(a, b);
            assert!(
                (trap - exact).abs() < 1e-6 * exact.abs().max(1.0),
                "{f:?}: {trap} vs {exact}"
            );
            // ∫ Cp/T dT likewise (dS = Cp dT/T).
            let trap_s: f64 = (0..n)
                .map(|k| {
                    let (t1, t2) = (a + k as f64 * h, a + (k + 1) as f64 * h);
                    0.5 * h * (f.cp(t1) / t1 + f.cp(t2) / t2)
                })
                .sum();
            let exact_s = f.entropy_change(b) - f.entropy_change(a);
            assert!(
                (trap_s - exact_s).abs() < 1e-6 * exact_s.abs().max(1.0),
                "{f:?}: {trap_s} vs {exact_s}"
            );
            // The antiderivatives are continuous (across a NASA T_mid too).
            for tc in [1000.0 - 1e-9, 1000.0] {
                assert!((f.sensible(tc) - f.sensible(1000.0 - 1e-9)).abs() < 1e-4);
                assert!((f.entropy_change(tc) - f.entropy_change(1000.0 - 1e-9)).abs() < 1e-7);
            }
            let t = 800.0;
            let d = 1e-3;
            let fd = (f.cp(t + d) - f.cp(t - d)) / (2.0 * d);
            assert!(
                (fd - f.dcp_dt(t)).abs() < 1e-6 * fd.abs().max(1e-6),
                "{f:?}"
            );
        }
    }

    /// NIST's Shomate form closes at 298.15 K: H(298.15) − H(298.15) = A t + ... − E/t + F − H
    /// is zero within the fit (CO, 298–1300 K, NIST WebBook coefficients from memory), and the
    /// form's S(298.15) with G is CO's tabulated 197.66 J/(mol K) (CODATA key values, from
    /// memory).
    #[test]
    fn shomate_closes_at_the_standard_temperature() {
        let co = HeatCapacity::Shomate {
            c: [
                25.56759, 6.096130, 4.054656, -2.671301, 0.131021, -118.0089, 227.3665, -110.5271,
            ],
            range: (298.0, 1300.0),
        };
        assert!(co.enthalpy_increment(T_STANDARD).abs() < 5.0);
        assert!((co.implied_s().unwrap() - 197.66).abs() < 0.05);
        assert_eq!(co.implied_h_f(), Some(-110_527.1));
        let sp = SpeciesThermo {
            cp: Some(co.clone()),
            h_f: co.implied_h_f(),
            s: co.implied_s(),
        };
        // Absolute H and S follow the form: H(T) = H_f + increment, S(T) = the form's S.
        let t: f64 = 900.0;
        let x = t / 1000.0;
        let c = [
            25.56759, 6.096130, 4.054656, -2.671301, 0.131021, -118.0089, 227.3665, -110.5271,
        ];
        let s_form = c[0] * x.ln() + c[1] * x + c[2] * x * x / 2.0 + c[3] * x.powi(3) / 3.0
            - c[4] / (2.0 * x * x)
            + c[6];
        assert!((sp.entropy(t).unwrap() - s_form).abs() < 1e-9);
        let h_form = 1000.0
            * (c[0] * x + c[1] * x * x / 2.0 + c[2] * x.powi(3) / 3.0 + c[3] * x.powi(4) / 4.0
                - c[4] / x
                + c[5]);
        assert!((sp.enthalpy(t).unwrap() - h_form).abs() < 1e-6);
    }
}
