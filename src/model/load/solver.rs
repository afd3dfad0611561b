//! The `solver` section: tolerances, step limit, the choice of linear algebra and which CSTR
//! steady state to report.

use super::messages::significant;
use super::{Cx, LoadError};
use crate::model::file::{RawQty, RawSolver};
use crate::model::{Reactor, SolverSettings};
use crate::units::Dim;

/// The tightest relative tolerance accepted: the integrator's own floor
/// ([`crate::model::solver_settings::MIN_RTOL`], about 450 × the f64 machine epsilon 2.2e-16, IEEE 754), so no
/// value accepted here is refused later by the integrator.
pub const MIN_RTOL: f64 = crate::model::solver_settings::MIN_RTOL;
/// The loosest relative tolerance accepted ([`crate::model::solver_settings::MAX_RTOL`]).
pub const MAX_RTOL: f64 = crate::model::solver_settings::MAX_RTOL;

/// The `solver` section. `feed_total` (F_T0 in mol/s, or N_T0 in mol) bounds `atol`.
pub(super) fn build_solver(
    s: Option<&RawSolver>,
    reactor: &Reactor,
    feed_total: f64,
    cx: &Cx,
) -> Result<SolverSettings, LoadError> {
    let Some(s) = s else {
        return Ok(SolverSettings::default());
    };
    let rtol = match s.rtol {
        None => None,
        Some(r) if (MIN_RTOL..=MAX_RTOL).contains(&r) => Some(r),
        Some(r) => {
            return Err(cx.err(
                "solver.rtol",
                &format!(
                    "rtol must lie in [{MIN_RTOL:e}, {MAX_RTOL:e}], got {}",
                    significant(r)
                ),
                Some(if r > 0.0 && r < MIN_RTOL {
                    format!(
                        "below {MIN_RTOL:e} the error test asks for more than double precision \
                         resolves (machine epsilon 2.2e-16); 1e-8 is the default"
                    )
                } else if r > MAX_RTOL {
                    "beyond 1e-2 the integration error shows in the printed figures; 1e-8 is the default"
                        .to_string()
                } else {
                    "1e-8 is the default".to_string()
                }),
            ));
        }
    };
    let atol = match &s.atol {
        None => None,
        Some(q) => {
            let (want, ex) = if reactor.is_batch() {
                (Dim::AMOUNT, "1e-10 mol")
            } else {
                (Dim::AMOUNT.div(Dim::TIME), "1e-10 mol/s")
            };
            let v = cx.qty(
                "solver.atol",
                q,
                want,
                "an absolute tolerance on the state",
                ex,
            )?;
            let v = cx.positive("solver.atol", v, "atol")?;
            let unit = if reactor.is_batch() { "mol" } else { "mol/s" };
            if let Err(m) = crate::model::solver_settings::check_atol(v, feed_total, unit) {
                return Err(cx.err(
                    "solver.atol",
                    &m,
                    Some("leave it out for the per-species default".into()),
                ));
            }
            Some(v)
        }
    };
    let max_steps = match s.max_steps {
        Some(0) => return Err(cx.err("solver.max_steps", "max_steps must be at least 1", None)),
        m => m,
    };
    use crate::model::solver_settings::LinearAlgebra;
    let linear_algebra = match s.linear_algebra.as_deref().map(str::trim) {
        None | Some("auto") => None,
        Some("dense") => Some(LinearAlgebra::Dense),
        Some("sparse") => Some(LinearAlgebra::Sparse),
        Some("krylov") => Some(LinearAlgebra::Krylov),
        Some(other) => {
            return Err(cx.err(
                "solver.linear_algebra",
                &format!("unknown linear algebra `{other}`"),
                Some("one of auto, dense, sparse, krylov".into()),
            ));
        }
    };
    let steady_state = match &s.steady_state {
        None => None,
        Some(raw) => {
            let text = match raw {
                RawQty::Number(v) => v.to_string(),
                RawQty::Text(t) => t.clone(),
            };
            Some(
                text.parse()
                    .map_err(|m: String| cx.err("solver.steady_state", &m, None))?,
            )
        }
    };
    Ok(SolverSettings {
        rtol,
        atol,
        max_steps,
        linear_algebra,
        steady_state,
    })
}
