//! The study's solver settings (`solver:` in the file, and the matching command-line flags):
//! the choices and the ranges every value must lie in. They belong to the model, since the
//! study states them and the loader checks them; the solver reads them (`crate::solve`
//! re-exports them), so the imports run one way, model before solve.

/// The tightest relative tolerance the integrator accepts (about 450 × the f64 machine
/// epsilon 2.2e-16, IEEE 754: a tighter error test cannot be met in double precision). The
/// loader and the command line refuse anything tighter, so no value accepted there is refused
/// later by the integrator.
pub const MIN_RTOL: f64 = 1e-13;
/// The loosest relative tolerance accepted: beyond 1 % the integration error is visible in the
/// printed figures and the answer can no longer be trusted (common practice).
pub const MAX_RTOL: f64 = 1e-2;
/// The loosest absolute tolerance accepted, as a fraction of the total feed (F_T0 or N_T0):
/// a looser one lets the error test pass with amounts wrong by a visible part of the feed.
pub const MAX_ATOL_FRACTION: f64 = 1e-3;

/// Whether a relative tolerance lies in the accepted range; the message names the range.
pub fn check_rtol(rtol: f64) -> Result<(), String> {
    if (MIN_RTOL..=MAX_RTOL).contains(&rtol) {
        Ok(())
    } else {
        Err(format!(
            "rtol must lie in [{MIN_RTOL:e}, {MAX_RTOL:e}], got {rtol:e}{}",
            if rtol > 0.0 && rtol < MIN_RTOL {
                " (tighter than double precision resolves; 1e-8 is the default)"
            } else {
                " (1e-8 is the default)"
            }
        ))
    }
}

/// Whether an absolute tolerance (mol/s or mol) lies in the accepted range for a feed of
/// `total` (F_T0 or N_T0): positive and at most [`MAX_ATOL_FRACTION`] of it.
pub fn check_atol(atol: f64, total: f64, unit: &str) -> Result<(), String> {
    let max = MAX_ATOL_FRACTION * total;
    if atol > 0.0 && atol.is_normal() && atol <= max {
        Ok(())
    } else {
        Err(format!(
            "atol must be positive and at most {MAX_ATOL_FRACTION:e} of the total feed ({max:.3e} {unit}), got {atol:e} {unit}"
        ))
    }
}

/// Which matrix representation and LU factorization the Newton iteration uses.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum LinearAlgebra {
    /// Dense nalgebra matrix with partial-pivoting LU (`NalgebraMat` + [`crate::solve::dense_lu::DenseLu`]).
    Dense,
    /// Sparse faer CSC matrix with sparse LU (`FaerSparseMat` + `FaerSparseLU`); the pattern is
    /// taken from the Jacobian triplets at y0.
    Sparse,
    /// Sparse faer CSC matrix, solved by GMRES preconditioned with the LU of the matrix with
    /// its small entries dropped ([`crate::solve::krylov`]); falls back to the complete sparse LU when
    /// GMRES does not converge.
    Krylov,
    /// Dense up to [`AUTO_KRYLOV_ABOVE`] states, Krylov above.
    #[default]
    Auto,
}

impl LinearAlgebra {
    /// The choice in force for `n` states: [`LinearAlgebra::Auto`] resolved by size.
    pub fn resolve(self, n: usize) -> LinearAlgebra {
        match self {
            LinearAlgebra::Auto if n > AUTO_KRYLOV_ABOVE => LinearAlgebra::Krylov,
            LinearAlgebra::Auto => LinearAlgebra::Dense,
            chosen => chosen,
        }
    }
}

/// [`LinearAlgebra::Auto`] switches from dense LU to the Krylov solver for more states than
/// this. Measured on generated networks (docs/performance.md): dense was faster at 50 and 100
/// states (16 against 44 ms, 22 against 35 ms), Krylov at 200 (65 against 121 ms), 300 (0.19
/// against 0.41 s) and 500 states (0.41 against 2.7 s).
pub const AUTO_KRYLOV_ABOVE: usize = 150;

/// Which steady state a solve reports when there are several.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum SteadyStateChoice {
    /// The one with the lowest conversion of the key (the default).
    #[default]
    Lowest,
    /// The one with the highest conversion of the key.
    Highest,
    /// The n-th from the lowest conversion, 1-based.
    Number(usize),
}

impl std::str::FromStr for SteadyStateChoice {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, String> {
        match s.trim() {
            "lowest" => Ok(SteadyStateChoice::Lowest),
            "highest" => Ok(SteadyStateChoice::Highest),
            t => match t.parse::<usize>() {
                Ok(n) if n >= 1 => Ok(SteadyStateChoice::Number(n)),
                _ => Err(format!(
                    "`{t}` is not a steady-state choice: give `lowest`, `highest` or a number from 1 (in order of rising conversion)"
                )),
            },
        }
    }
}

impl std::fmt::Display for SteadyStateChoice {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            SteadyStateChoice::Lowest => write!(f, "lowest"),
            SteadyStateChoice::Highest => write!(f, "highest"),
            SteadyStateChoice::Number(n) => write!(f, "{n}"),
        }
    }
}
