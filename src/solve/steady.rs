//! Every steady state of a CSTR, with its stability.
//!
//! The steady states at volume V are the zeros of G(F) = F_0 − F + V f(F). One Newton solve
//! ([`super::newton::solve_cstr`]) finds one of them; nonlinear kinetics (substrate
//! inhibition r = k C/(1 + K C)², autocatalysis) can give several at the same V, with the
//! middle one unstable (van Heerden, Ind. Eng. Chem. 45, 1953). To find the others the branch of
//! steady states is followed in the volume by pseudo-arclength continuation (Keller 1977; Allgower
//! & Georg, Numerical Continuation Methods, from memory) from a volume so small that the outlet
//! is the feed, in (u, λ) with u = F/F_T0 and λ = ln V, through its turning points, up to
//! 1e4 V; each crossing of λ = ln V is polished by Newton at V. The branch that starts at the
//! feed is the one a reactor started up by filling from the feed and growing the holdup
//! follows, and for a network of one reaction it is every steady state (the extent solves one
//! scalar equation, whose graph in V is this curve). A closed branch that does not touch the
//! feed (an isola) is not found; docs/methods.md says so.
//!
//! **Stability** is read from the transient CSTR linearised at the steady state. For a liquid
//! (constant v0) the holdup is N = τ F, so dF/dt = G(F)/τ and the Jacobian is
//! (−I + V ∂f/∂F)/τ. For an ideal gas at constant T and P the holdup N_T = V P/(R T) is fixed and
//! the mole fractions x move: N_T dx_j/dt = F_j0 − x_j F_T + V R_j(x) with F_T = F_T0 + V Σ R;
//! the Jacobian is taken on the plane Σ x = 1. The state is stable when every eigenvalue has a
//! negative real part (Lyapunov's indirect method, common practice).

use super::newton::{self, Extents, NewtonError, NewtonStats};
use crate::model::{Network, Phase};
use crate::reactor::Balance;
use nalgebra::{DMatrix, DVector};

pub use crate::model::solver_settings::SteadyStateChoice;

/// One steady state.
#[derive(Debug, Clone, serde::Serialize)]
pub struct SteadyState {
    /// Outlet molar flows F_j, mol/s.
    #[serde(skip)]
    pub flows: Vec<f64>,
    /// Conversion of the key reactant.
    pub conversion: f64,
    /// All eigenvalues of the transient Jacobian have negative real parts.
    pub stable: bool,
    /// The largest real part of those eigenvalues, 1/s (a positive value is the growth rate of
    /// a small disturbance).
    pub max_eigenvalue_real: f64,
    /// ‖F_0 − F + V f(F)‖∞, mol/s.
    pub residual: f64,
    /// The largest |ΔF_j| one more Newton step would make, mol/s: the distance to the exact
    /// state to first order (small even where the residual cannot be, at V k ~ 1e300).
    pub newton_step: f64,
    /// The reactor temperature, K, when the CSTR has an energy balance
    /// ([`super::cstr_heat`]).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub temperature: Option<f64>,
}

/// Every steady state found, in order of rising conversion of the key.
#[derive(Debug, Clone)]
pub struct SteadyStates {
    pub states: Vec<SteadyState>,
    /// Why the search for further states was not made or not finished, if so.
    pub note: Option<String>,
    pub stats: NewtonStats,
}

/// Networks with more species than this get the single Newton solve only (the continuation
/// works on dense (n+1)² systems); the report says so.
pub const MAX_SEARCH_SPECIES: usize = 60;

const MAX_ARC_STEPS: usize = 4000;

/// Find the steady states of the CSTR at `volume`. Errors only when not even one is found.
pub fn find_all(
    net: &Network,
    b: &Balance,
    volume: f64,
    tol: f64,
) -> Result<SteadyStates, NewtonError> {
    let e = Extents::new(net, b);
    let primary = newton::solve_extents(&e, volume, tol);
    let mut found: Vec<Vec<f64>> = Vec::new();
    let mut stats = NewtonStats::default();
    let mut note = None;
    let first_err = match primary {
        Ok((f, s)) => {
            stats = s;
            found.push(f);
            None
        }
        Err(err) => Some(err),
    };
    if net.species.len() > MAX_SEARCH_SPECIES {
        note = Some(format!(
            "only one steady state was sought: the search for several is made for up to {MAX_SEARCH_SPECIES} species"
        ));
    } else {
        match branch_crossings(&e, volume, tol) {
            Ok(xs) => {
                for f in xs {
                    if !found.iter().any(|g| same_state(g, &f, e.feed)) {
                        found.push(f);
                    }
                }
            }
            Err(why) => {
                note = Some(format!(
                    "the search for further steady states did not finish ({why}); there may be others"
                ))
            }
        }
    }
    // A root of the balances with a species below zero (a quadratic system has such roots; the
    // Newton solve from the feed can land on one) is not a state of the vessel: drop it when a
    // physical one was found too. With none physical, the solver's negative-amount guard
    // refuses the result with its message.
    let limit = super::NEGATIVE_FRACTION * net.feed.total();
    let physical = |f: &Vec<f64>| f.iter().all(|v| *v >= -limit);
    if found.iter().any(physical) {
        found.retain(physical);
    }
    if found.is_empty() {
        return Err(first_err.unwrap_or(NewtonError::NoConvergence {
            residual: f64::NAN,
            volume,
            iterations: stats.iterations,
            stages: stats.continuation_stages,
        }));
    }
    let key = net.key;
    let fk0 = net.feed.amounts[key];
    let mut states: Vec<SteadyState> = found
        .into_iter()
        .map(|f| {
            let mut g = vec![0.0; f.len()];
            newton::residual(b, e.feed, volume, &f, &mut g);
            let growth = max_eigenvalue_real(net, b, volume, &f);
            SteadyState {
                conversion: if fk0 > 0.0 { (fk0 - f[key]) / fk0 } else { 0.0 },
                stable: growth < 0.0,
                max_eigenvalue_real: growth,
                residual: g.iter().fold(0.0, |m: f64, v| m.max(v.abs())),
                newton_step: newton::step_size(&e, volume, &e.extents_of(&f)),
                temperature: None,
                flows: f,
            }
        })
        .collect();
    states.sort_by(|a, b| a.conversion.total_cmp(&b.conversion));
    Ok(SteadyStates {
        states,
        note,
        stats,
    })
}

impl SteadyStates {
    /// The index of the chosen state, or an error naming how many there are.
    pub fn pick(&self, choice: SteadyStateChoice) -> Result<usize, String> {
        let n = self.states.len();
        match choice {
            SteadyStateChoice::Lowest => Ok(0),
            SteadyStateChoice::Highest => Ok(n - 1),
            SteadyStateChoice::Number(k) if k <= n => Ok(k - 1),
            SteadyStateChoice::Number(k) => Err(format!(
                "steady state {k} was asked for, but the CSTR has {n} steady state{} at this volume",
                if n == 1 { "" } else { "s" }
            )),
        }
    }
}

/// Two solutions are the same state when their flows agree to 1e-6 of the feed scale.
fn same_state(a: &[f64], b: &[f64], f0: &[f64]) -> bool {
    let s = f0.iter().sum::<f64>().max(f64::MIN_POSITIVE);
    a.iter().zip(b).all(|(x, y)| (x - y).abs() <= 1e-6 * s)
}

/// The largest real part of the eigenvalues of the transient CSTR's Jacobian at F (1/s); +∞
/// when it cannot be computed (reported unstable rather than stable).
pub fn max_eigenvalue_real(net: &Network, b: &Balance, volume: f64, f: &[f64]) -> f64 {
    let n = f.len();
    let m = match net.phase {
        Phase::Liquid => {
            let tau = volume / net.feed.volumetric;
            newton::residual_jacobian(b, volume, f) / tau
        }
        Phase::Gas => {
            // x = F/F_T; N_T dx_j/dt = F_j0 − x_j F_T + V R_j(x), F_T = F_T0 + V Σ_k R_k.
            let ft: f64 = f.iter().sum();
            if n < 2 || !(ft > 0.0) {
                return -1.0 / (volume / net.feed.volumetric);
            }
            let x: Vec<f64> = f.iter().map(|v| v / ft).collect();
            let mut rr = vec![0.0; n];
            b.rhs(&x, &mut rr);
            let f_t = net.feed.total() + volume * rr.iter().sum::<f64>();
            let mut trip = Vec::new();
            b.jacobian(&x, &mut trip);
            let mut jr = DMatrix::<f64>::zeros(n, n);
            for &(r, c, v) in &trip {
                if r < n && c < n {
                    jr[(r, c)] += v;
                }
            }
            let colsum: Vec<f64> = (0..n).map(|k| jr.column(k).sum()).collect();
            let nt =
                volume * net.feed.pressure / (crate::units::GAS_CONSTANT * net.feed.temperature);
            let mut full = DMatrix::<f64>::zeros(n, n);
            for j in 0..n {
                for k in 0..n {
                    full[(j, k)] = (volume * jr[(j, k)]
                        - x[j] * volume * colsum[k]
                        - if j == k { f_t } else { 0.0 })
                        / nt;
                }
            }
            // On the plane Σ x = 1 (an invariant plane: 1ᵀ is a left eigenvector), in the
            // coordinates d = Σ_k<n c_k (e_k − e_n).
            let mut t = DMatrix::<f64>::zeros(n - 1, n - 1);
            for i in 0..n - 1 {
                for k in 0..n - 1 {
                    t[(i, k)] = full[(i, k)] - full[(i, n - 1)];
                }
            }
            t
        }
    };
    if m.iter().any(|v| !v.is_finite()) {
        return f64::INFINITY;
    }
    match nalgebra::Schur::try_new(m, 1e-14, 10_000) {
        Some(s) => s
            .complex_eigenvalues()
            .iter()
            .fold(f64::NEG_INFINITY, |a, z| a.max(z.re)),
        None => f64::INFINITY,
    }
}

/// Follow the branch of steady states in λ = ln V from a volume where the outlet is the feed
/// up to 1e4 V; return the polished states where it crosses V.
fn branch_crossings(e: &Extents, volume: f64, tol: f64) -> Result<Vec<Vec<f64>>, String> {
    let b = e.balance;
    let f0 = e.feed;
    let n = f0.len();
    let s = f0.iter().sum::<f64>();
    if !(s > 0.0) {
        return Ok(vec![]);
    }
    let target = volume.ln();
    // A start where V f(F0) is a millionth of the feed: the outlet is the feed to first order.
    let mut r0 = vec![0.0; n];
    b.rhs(f0, &mut r0);
    let rate = r0.iter().fold(0.0, |m: f64, v| m.max(v.abs()));
    let v_start = if rate > 0.0 {
        (1e-6 * s / rate).min(1e-6 * volume)
    } else {
        1e-6 * volume
    };
    let lam_end = target + 1e4f64.ln();
    // The start point: Newton at v_start from the feed.
    let (f_start, _) = newton::solve_extents(e, v_start, tol).map_err(|e| e.to_string())?;
    let mut u: Vec<f64> = f_start.iter().map(|v| v / s).collect();
    let mut lam = v_start.ln();
    let u0: Vec<f64> = f0.iter().map(|v| v / s).collect();

    // H(u, λ) = u0 − u + e^λ f(s u)/s; H_u = −I + e^λ ∂f/∂F; H_λ = e^λ f(s u)/s.
    let eval = |u: &[f64], lam: f64| -> Option<(DVector<f64>, DMatrix<f64>)> {
        let fl: Vec<f64> = u.iter().map(|v| v * s).collect();
        let v = lam.exp();
        let mut rhs = vec![0.0; n];
        b.rhs(&fl, &mut rhs);
        let jm = newton::residual_jacobian(b, v, &fl);
        let mut h = DVector::zeros(n);
        let mut a = DMatrix::zeros(n, n + 1);
        for j in 0..n {
            h[j] = u0[j] - u[j] + v * rhs[j] / s;
            for k in 0..n {
                a[(j, k)] = jm[(j, k)];
            }
            a[(j, n)] = v * rhs[j] / s;
        }
        (h.iter().all(|x| x.is_finite()) && a.iter().all(|x| x.is_finite())).then_some((h, a))
    };
    // Tangent: [A; tᵀ] t_new = [0; 1], normalised (keeps the direction of travel).
    let tangent = |a: &DMatrix<f64>, t_prev: &DVector<f64>| -> Option<DVector<f64>> {
        let mut m = DMatrix::zeros(n + 1, n + 1);
        m.view_mut((0, 0), (n, n + 1)).copy_from(a);
        for k in 0..=n {
            m[(n, k)] = t_prev[k];
        }
        let mut rhs = DVector::zeros(n + 1);
        rhs[n] = 1.0;
        let t = m.lu().solve(&rhs)?;
        let norm = t.norm();
        (norm.is_finite() && norm > 0.0).then(|| t / norm)
    };
    let (_, a0) = eval(&u, lam).ok_or("rates not finite at the start")?;
    let mut e_lam = DVector::zeros(n + 1);
    e_lam[n] = 1.0;
    let mut t = tangent(&a0, &e_lam).ok_or("singular at the start")?;
    let mut h: f64 = 0.2;
    let mut crossings = Vec::new();
    let mut steps = 0;
    while lam < lam_end {
        steps += 1;
        if steps > MAX_ARC_STEPS {
            return Err(format!(
                "{MAX_ARC_STEPS} continuation steps reached at V = {:.3e} m3",
                lam.exp()
            ));
        }
        // Predictor, then Newton on [H; tᵀ(z − z_pred)] = 0.
        let mut z = DVector::zeros(n + 1);
        for j in 0..n {
            z[j] = u[j] + h * t[j];
        }
        z[n] = lam + h * t[n];
        let zp = z.clone();
        let mut ok = false;
        let mut a_last = None;
        for _ in 0..8 {
            let Some((hv, a)) = eval(&z.as_slice()[..n], z[n]) else {
                break;
            };
            let mut m = DMatrix::zeros(n + 1, n + 1);
            m.view_mut((0, 0), (n, n + 1)).copy_from(&a);
            for k in 0..=n {
                m[(n, k)] = t[k];
            }
            let mut rhs = DVector::zeros(n + 1);
            for j in 0..n {
                rhs[j] = -hv[j];
            }
            rhs[n] = -(t.dot(&(&z - &zp)));
            let Some(dz) = m.lu().solve(&rhs) else {
                break;
            };
            z += &dz;
            if dz.amax() <= 1e-10 {
                ok = eval(&z.as_slice()[..n], z[n]).is_some_and(|(hv, a)| {
                    a_last = Some(a);
                    hv.amax() <= 1e-9
                });
                break;
            }
        }
        // A step that leaves the physical flows (beyond round-off) is not taken, nor one whose
        // corrector moved far from the prediction or whose tangent turned by more than ~35°
        // (the usual guards against jumping to another part of the branch).
        if ok && ((0..n).any(|j| z[j] < -1e-9) || (&z - &zp).norm() > 0.25 * h) {
            ok = false;
        }
        let mut t_next = None;
        if ok {
            let a = a_last.as_ref().expect("set with ok");
            match tangent(a, &t) {
                Some(tn) if tn.dot(&t) >= 0.8 || h < 1e-6 => t_next = Some(tn),
                _ => ok = false,
            }
        }
        if !ok {
            h *= 0.5;
            if h < 1e-9 {
                return Err(format!(
                    "the branch could not be followed past V = {:.3e} m3",
                    lam.exp()
                ));
            }
            continue;
        }
        let lam_new = z[n];
        if (lam - target) * (lam_new - target) <= 0.0 && lam_new != lam {
            // Interpolate to λ = ln V and polish by Newton at V.
            let w = (target - lam) / (lam_new - lam);
            let guess: Vec<f64> = (0..n)
                .map(|j| s * (u[j] + w * (z[j] - u[j])).max(0.0))
                .collect();
            let mut xi = e.extents_of(&guess);
            if newton::newton(e, volume, &mut xi, tol).is_ok() {
                let mut fl = vec![0.0; n];
                e.flows(&xi, &mut fl);
                if fl.iter().all(|v| *v >= 0.0) {
                    crossings.push(fl);
                }
            } else {
                return Err(format!(
                    "Newton did not converge at a crossing of V = {volume:.3e} m3"
                ));
            }
        }
        let t_new = t_next.expect("set with ok");
        u = z.as_slice()[..n].to_vec();
        lam = lam_new;
        t = t_new;
        h = (h * 1.5).min(0.5);
    }
    Ok(crossings)
}
