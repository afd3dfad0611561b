//! The statistics of a least-squares fit: covariance, standard errors, confidence intervals,
//! correlation, identifiability, information criteria, lack of fit and the nested F-test, with
//! the Student t and F distributions they need.
//!
//! Residuals are the weighted ones the optimiser minimised, `r = (model − measured)/σ`, and J
//! their Jacobian in θ (see [`super::lm`]). With N residuals and P parameters (Bates & Watts,
//! "Nonlinear Regression Analysis and Its Applications", Wiley 1988, ch. 2; from memory):
//!
//! ```text
//!   dof = N − P,   SSR = Σ r²,   s² = SSR/dof,   Cov(θ) = s² (JᵀJ)⁻¹,   SE_j = √Cov_jj,
//!   CI95_j = θ_j ± t_{0.975, dof} SE_j,   Corr_ij = Cov_ij / (SE_i SE_j)
//! ```
//!
//! (JᵀJ)⁻¹ is formed from the SVD of the column-scaled Jacobian `J D⁻¹ = U Σ Vᵀ`,
//! `D = diag ‖J_·j‖`, whose squared singular values are the eigenvalues of the
//! correlation-scaled `D⁻¹JᵀJD⁻¹` (without forming JᵀJ, so no precision is lost to squaring):
//! `(JᵀJ)⁻¹ = D⁻¹ V Σ⁻² Vᵀ D⁻¹`.
//!
//! Identifiability: an eigenvalue `σ_k² < 10⁻⁸ σ_max²` (or a zero column: a parameter the
//! residuals do not depend on) marks its eigenvector as a combination of parameters the data
//! do not determine. Every parameter with weight |v_jk| ≥ 0.1 in such a combination is "not
//! identifiable": it gets no SE, CI or correlation (never a narrow interval); the remaining
//! covariance is the pseudo-inverse over the kept eigenvalues.
//!
//! Information criteria for Gaussian errors of unknown variance (common practice; Akaike, IEEE
//! Trans. Autom. Control 19, 1974; Schwarz, Ann. Statist. 6, 1978):
//! `AIC = N ln(SSR/N) + 2P`, `BIC = N ln(SSR/N) + P ln N`.
//!
//! (Section and equation numbers of the sources are quoted from memory.)
//!
//! Distributions: the regularised incomplete beta function `I_x(a, b)` by its continued fraction
//! (Abramowitz & Stegun 26.5.8, evaluated by the modified Lentz method as in Press et al.,
//! Numerical Recipes, 3rd ed., §6.4), ln Γ by Lanczos's approximation (g = 7, nine terms;
//! Lanczos, SIAM J. Numer. Anal. B 1, 1964). Student t: `P(|T| > t) = I_{ν/(ν+t²)}(ν/2, 1/2)`
//! (A&S 26.7.1 with 26.5); F: `P(F > f) = I_{d2/(d2+d1 f)}(d2/2, d1/2)` (A&S 26.6.2).

use std::collections::BTreeMap;

use serde::Serialize;

use super::lm::LmResult;

/// Eigenvalue ratio below which a direction counts as not determined by the data.
pub const IDENTIFIABILITY_RATIO: f64 = 1e-8;
/// Weight in an undetermined combination from which a parameter counts as part of it.
pub const COMBINATION_WEIGHT: f64 = 0.1;

/// A combination of parameters the data do not determine: the eigenvector of the
/// correlation-scaled JᵀJ, weights in scaled θ (`‖J_·j‖ θ_j`), largest weight positive.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Combination {
    /// (parameter index, weight), weights with |w| ≥ 0.1, largest |w| first.
    pub weights: Vec<(usize, f64)>,
    /// Its eigenvalue over the largest (0 for a parameter the residuals do not depend on).
    pub eigenvalue_ratio: f64,
}

/// The lack-of-fit test from replicate groups (Draper & Smith,
/// "Applied Regression Analysis", "lack of fit and pure error"; from memory).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LackOfFit {
    /// SS_PE = Σ over replicate groups of Σ (r − mean r)².
    pub ss_pure_error: f64,
    /// df_PE = Σ (n_g − 1).
    pub df_pure_error: usize,
    /// SS_LF = SSR − SS_PE.
    pub ss_lack_of_fit: f64,
    /// df_LF = dof − df_PE (0 when there are no more distinct points than parameters).
    pub df_lack_of_fit: usize,
    /// F = (SS_LF/df_LF)/(SS_PE/df_PE); None when df_LF = 0 or SS_PE = 0 (no test possible).
    pub f: Option<f64>,
    /// Upper tail of F(df_LF, df_PE) at f: small means the model misses the data by more than
    /// the replicates scatter.
    pub p: Option<f64>,
}

/// An F-test between a simpler model nested in a fuller one.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FTest {
    /// F = ((SSR_A − SSR_B)/(P_B − P_A)) / (SSR_B/(N − P_B)).
    pub f: f64,
    pub df1: usize,
    pub df2: usize,
    /// Upper tail of F(df1, df2) at f (1 when F ≤ 0: the fuller model fits no better).
    pub p: f64,
}

/// Everything said about a fit at its optimum (see the module documentation).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Statistics {
    /// N, the number of residuals (measurements).
    pub observations: usize,
    /// P, the number of estimated parameters.
    pub parameters: usize,
    /// N − P.
    pub dof: usize,
    pub ssr: f64,
    /// s² = SSR/dof.
    pub s2: f64,
    /// t_{0.975, dof}, the factor of the 95 % intervals.
    pub t975: f64,
    /// Cov(θ) = s²(JᵀJ)⁻¹; None where either parameter is not identifiable.
    pub covariance: Vec<Vec<Option<f64>>>,
    /// Standard errors in θ; None for a parameter that is not identifiable.
    pub se: Vec<Option<f64>>,
    /// 95 % confidence intervals in θ.
    pub ci95: Vec<Option<[f64; 2]>>,
    pub correlation: Vec<Vec<Option<f64>>>,
    pub identifiable: Vec<bool>,
    /// The undetermined combinations.
    pub unidentifiable: Vec<Combination>,
    /// Eigenvalues of the correlation-scaled JᵀJ over the largest, descending (the columns
    /// the residuals depend on).
    pub eigenvalue_ratios: Vec<f64>,
    /// None when SSR = 0 (ln 0).
    pub aic: Option<f64>,
    pub bic: Option<f64>,
    /// None without replicates.
    pub lack_of_fit: Option<LackOfFit>,
}

/// The statistics of the fit `result`; `groups` gives a replicate-group id per residual
/// (residuals with the same id are replicates: same species, run and independent variable).
///
/// Errors: dof ≤ 0, a non-finite residual or Jacobian entry, a `groups` of the wrong length.
pub fn statistics(result: &LmResult, groups: Option<&[usize]>) -> Result<Statistics, String> {
    let n = result.residuals.len();
    let p = result.theta.len();
    let jac = &result.jacobian;
    if jac.nrows() != n || jac.ncols() != p {
        return Err(format!(
            "Jacobian is {}×{}, expected {n}×{p}",
            jac.nrows(),
            jac.ncols()
        ));
    }
    if n <= p {
        return Err(format!(
            "{n} measurements for {p} parameters: at least one more measurement than parameters is needed"
        ));
    }
    if result
        .residuals
        .iter()
        .chain(jac.iter())
        .any(|v| !v.is_finite())
    {
        return Err("non-finite residual or Jacobian entry at the optimum".to_string());
    }
    let dof = n - p;
    let ssr: f64 = result.residuals.iter().map(|r| r * r).sum();
    let s2 = ssr / dof as f64;
    let t975 = student_t_quantile(0.975, dof as f64);

    // Column scaling and the SVD of the scaled Jacobian of the columns that are not zero.
    let norms: Vec<f64> = (0..p).map(|j| jac.column(j).norm()).collect();
    let nz: Vec<usize> = (0..p).filter(|&j| norms[j] > 0.0).collect();
    let mut identifiable = vec![true; p];
    let mut unidentifiable = Vec::new();
    for j in (0..p).filter(|&j| norms[j] == 0.0) {
        identifiable[j] = false;
        unidentifiable.push(Combination {
            weights: vec![(j, 1.0)],
            eigenvalue_ratio: 0.0,
        });
    }
    let m = nz.len();
    let mut cov = vec![vec![None; p]; p];
    let mut eigenvalue_ratios = Vec::new();
    if m > 0 {
        let mut js = nalgebra::DMatrix::<f64>::zeros(n, m);
        for (c, &j) in nz.iter().enumerate() {
            for i in 0..n {
                js[(i, c)] = jac[(i, j)] / norms[j];
            }
        }
        let svd = nalgebra::SVD::try_new(js, false, true, f64::EPSILON, 0)
            .ok_or_else(|| "the singular value decomposition of J did not converge".to_string())?;
        let vt = svd
            .v_t
            .as_ref()
            .ok_or_else(|| "SVD without singular vectors".to_string())?;
        let sv = &svd.singular_values;
        let lmax = sv[0] * sv[0];
        let mut kept = Vec::new();
        for k in 0..m {
            let ratio = sv[k] * sv[k] / lmax;
            eigenvalue_ratios.push(ratio);
            if ratio >= IDENTIFIABILITY_RATIO {
                kept.push(k);
                continue;
            }
            let mut weights: Vec<(usize, f64)> = (0..m)
                .map(|c| (nz[c], vt[(k, c)]))
                .filter(|(_, w)| w.abs() >= COMBINATION_WEIGHT)
                .collect();
            weights.sort_by(|a, b| b.1.abs().total_cmp(&a.1.abs()));
            if weights.first().is_some_and(|w| w.1 < 0.0) {
                weights.iter_mut().for_each(|w| w.1 = -w.1);
            }
            for &(j, _) in &weights {
                identifiable[j] = false;
            }
            unidentifiable.push(Combination {
                weights,
                eigenvalue_ratio: ratio,
            });
        }
        for (a, &i) in nz.iter().enumerate() {
            for (b, &j) in nz.iter().enumerate() {
                if identifiable[i] && identifiable[j] {
                    let sum: f64 = kept
                        .iter()
                        .map(|&k| vt[(k, a)] * vt[(k, b)] / (sv[k] * sv[k]))
                        .sum();
                    cov[i][j] = Some(s2 * sum / (norms[i] * norms[j]));
                }
            }
        }
    }
    let se: Vec<Option<f64>> = (0..p).map(|j| cov[j][j].map(f64::sqrt)).collect();
    let ci95 = (0..p)
        .map(|j| {
            se[j].map(|s| {
                let t = result.theta[j];
                [t - t975 * s, t + t975 * s]
            })
        })
        .collect();
    let correlation = (0..p)
        .map(|i| {
            (0..p)
                .map(|j| match (cov[i][j], se[i], se[j]) {
                    (Some(c), Some(a), Some(b)) if a > 0.0 && b > 0.0 => Some(c / (a * b)),
                    _ => None,
                })
                .collect()
        })
        .collect();
    let (aic, bic) = information_criteria(ssr, n, p);
    let lack_of_fit = match groups {
        None => None,
        Some(g) => lack_of_fit(&result.residuals, g, dof)?,
    };
    Ok(Statistics {
        observations: n,
        parameters: p,
        dof,
        ssr,
        s2,
        t975,
        covariance: cov,
        se,
        ci95,
        correlation,
        identifiable,
        unidentifiable,
        eigenvalue_ratios,
        aic,
        bic,
        lack_of_fit,
    })
}

/// (AIC, BIC) = (N ln(SSR/N) + 2P, N ln(SSR/N) + P ln N); None when SSR = 0.
pub fn information_criteria(ssr: f64, n: usize, p: usize) -> (Option<f64>, Option<f64>) {
    if !(ssr > 0.0) || n == 0 {
        return (None, None);
    }
    let nf = n as f64;
    let base = nf * (ssr / nf).ln();
    (Some(base + 2.0 * p as f64), Some(base + p as f64 * nf.ln()))
}

/// ΔAIC_i = AIC_i − min AIC and the Akaike weights exp(−ΔAIC_i/2)/Σ exp(−ΔAIC/2)
/// (Burnham & Anderson, "Model Selection and Multimodel Inference", 2nd ed., 2002; from memory).
pub fn akaike_weights(aic: &[f64]) -> Vec<(f64, f64)> {
    let best = aic.iter().copied().fold(f64::INFINITY, f64::min);
    let raw: Vec<f64> = aic.iter().map(|a| (-(a - best) / 2.0).exp()).collect();
    let total: f64 = raw.iter().sum();
    aic.iter()
        .zip(raw)
        .map(|(a, w)| (a - best, w / total))
        .collect()
}

/// The lack-of-fit test from replicate groups (`groups[i]` = group id of residual i).
/// None when no group has more than one residual.
pub fn lack_of_fit(
    residuals: &[f64],
    groups: &[usize],
    dof: usize,
) -> Result<Option<LackOfFit>, String> {
    if groups.len() != residuals.len() {
        return Err(format!(
            "{} replicate-group ids for {} residuals",
            groups.len(),
            residuals.len()
        ));
    }
    let mut by_group: BTreeMap<usize, Vec<f64>> = BTreeMap::new();
    for (&g, &r) in groups.iter().zip(residuals) {
        by_group.entry(g).or_default().push(r);
    }
    let mut ss_pe = 0.0;
    let mut df_pe = 0usize;
    for rs in by_group.values().filter(|rs| rs.len() > 1) {
        let mean = rs.iter().sum::<f64>() / rs.len() as f64;
        ss_pe += rs.iter().map(|r| (r - mean) * (r - mean)).sum::<f64>();
        df_pe += rs.len() - 1;
    }
    if df_pe == 0 {
        return Ok(None);
    }
    let ssr: f64 = residuals.iter().map(|r| r * r).sum();
    let ss_lf = (ssr - ss_pe).max(0.0);
    let df_lf = dof.saturating_sub(df_pe);
    let (f, p) = if df_lf > 0 && ss_pe > 0.0 {
        let f = (ss_lf / df_lf as f64) / (ss_pe / df_pe as f64);
        (Some(f), Some(f_upper_tail(f, df_lf as f64, df_pe as f64)))
    } else {
        (None, None)
    };
    Ok(Some(LackOfFit {
        ss_pure_error: ss_pe,
        df_pure_error: df_pe,
        ss_lack_of_fit: ss_lf,
        df_lack_of_fit: df_lf,
        f,
        p,
    }))
}

/// The nested F-test by the extra sum of squares (Bates & Watts 1988; from memory): model A
/// with `p_simpler` parameters nested in model B with `p_fuller`, both fitted to the same `n`
/// measurements.
pub fn nested_f_test(
    ssr_simpler: f64,
    p_simpler: usize,
    ssr_fuller: f64,
    p_fuller: usize,
    n: usize,
) -> Result<FTest, String> {
    if p_fuller <= p_simpler {
        return Err(format!(
            "the fuller model must have more parameters ({p_fuller}) than the simpler one ({p_simpler})"
        ));
    }
    if n <= p_fuller {
        return Err(format!(
            "{n} measurements for {p_fuller} parameters: no degrees of freedom left"
        ));
    }
    if !(ssr_fuller > 0.0) || !ssr_fuller.is_finite() || !(ssr_simpler >= 0.0) {
        return Err(format!(
            "SSR must be finite and positive (simpler {ssr_simpler}, fuller {ssr_fuller})"
        ));
    }
    let df1 = p_fuller - p_simpler;
    let df2 = n - p_fuller;
    let f = ((ssr_simpler - ssr_fuller) / df1 as f64) / (ssr_fuller / df2 as f64);
    let p = f_upper_tail(f, df1 as f64, df2 as f64);
    Ok(FTest { f, df1, df2, p })
}

/// ln Γ(x) for x > 0: Lanczos's approximation with g = 7 and nine coefficients (relative
/// error near 1e-15), reflection Γ(x)Γ(1−x) = π/sin(πx) below 1/2.
pub fn ln_gamma(x: f64) -> f64 {
    const G: f64 = 7.0;
    const C: [f64; 9] = [
        0.999_999_999_999_809_9,
        676.520_368_121_885_1,
        -1_259.139_216_722_402_8,
        771.323_428_777_653_1,
        -176.615_029_162_140_6,
        12.507_343_278_686_905,
        -0.138_571_095_265_720_12,
        9.984_369_578_019_572e-6,
        1.505_632_735_149_311_6e-7,
    ];
    if x < 0.5 {
        let pi = std::f64::consts::PI;
        return (pi / (pi * x).sin().abs()).ln() - ln_gamma(1.0 - x);
    }
    let x = x - 1.0;
    let mut a = C[0];
    let t = x + G + 0.5;
    for (i, c) in C.iter().enumerate().skip(1) {
        a += c / (x + i as f64);
    }
    0.5 * (2.0 * std::f64::consts::PI).ln() + (x + 0.5) * t.ln() - t + a.ln()
}

/// The continued fraction of the incomplete beta function (A&S 26.5.8) by the modified Lentz
/// method (Numerical Recipes, 3rd ed., §5.2 and §6.4).
fn beta_continued_fraction(a: f64, b: f64, x: f64) -> f64 {
    const TINY: f64 = 1e-300;
    let (qab, qap, qam) = (a + b, a + 1.0, a - 1.0);
    let mut c = 1.0;
    let mut d = 1.0 - qab * x / qap;
    if d.abs() < TINY {
        d = TINY;
    }
    d = 1.0 / d;
    let mut h = d;
    // One step of the modified Lentz method with coefficient aa: the factor it brings to h.
    let lentz = |aa: f64, c: &mut f64, d: &mut f64| {
        *d = 1.0 + aa * *d;
        if d.abs() < TINY {
            *d = TINY;
        }
        *c = 1.0 + aa / *c;
        if c.abs() < TINY {
            *c = TINY;
        }
        *d = 1.0 / *d;
        *d * *c
    };
    for m in 1..=100_000 {
        let m = m as f64;
        let m2 = 2.0 * m;
        h *= lentz(m * (b - m) * x / ((qam + m2) * (a + m2)), &mut c, &mut d);
        let del = lentz(
            -(a + m) * (qab + m) * x / ((a + m2) * (qap + m2)),
            &mut c,
            &mut d,
        );
        h *= del;
        if (del - 1.0).abs() <= 2.0 * f64::EPSILON {
            break;
        }
    }
    h
}

/// (I_x(a, b), 1 − I_x(a, b)) with `y = 1 − x` given separately so that neither loses digits
/// to a subtraction; the smaller tail is computed directly, the other as its complement.
pub fn incomplete_beta(a: f64, b: f64, x: f64, y: f64) -> (f64, f64) {
    if !(a > 0.0 && b > 0.0 && x >= 0.0 && y >= 0.0) {
        return (f64::NAN, f64::NAN);
    }
    if x == 0.0 {
        return (0.0, 1.0);
    }
    if y == 0.0 {
        return (1.0, 0.0);
    }
    let ln_front = ln_gamma(a + b) - ln_gamma(a) - ln_gamma(b) + a * x.ln() + b * y.ln();
    let front = ln_front.exp();
    if x < (a + 1.0) / (a + b + 2.0) {
        let lower = front * beta_continued_fraction(a, b, x) / a;
        (lower, 1.0 - lower)
    } else {
        let upper = front * beta_continued_fraction(b, a, y) / b;
        (1.0 - upper, upper)
    }
}

/// P(F > f) for the F distribution with (d1, d2) degrees of freedom:
/// I_{d2/(d2 + d1 f)}(d2/2, d1/2) (A&S 26.6.2). NaN for invalid arguments.
pub fn f_upper_tail(f: f64, d1: f64, d2: f64) -> f64 {
    if !(d1 > 0.0 && d2 > 0.0) || f.is_nan() {
        return f64::NAN;
    }
    if f <= 0.0 {
        return 1.0;
    }
    if f == f64::INFINITY {
        return 0.0;
    }
    let den = d2 + d1 * f;
    incomplete_beta(d2 / 2.0, d1 / 2.0, d2 / den, d1 * f / den).0
}

/// P(T > t) for t ≥ 0 and P(0 < T < t), Student's t with ν degrees of freedom:
/// P(|T| > t) = I_{ν/(ν+t²)}(ν/2, 1/2) (A&S 26.7.1 with 26.5.27).
fn t_tails(t: f64, nu: f64) -> (f64, f64) {
    let den = nu + t * t;
    let (outside, inside) = incomplete_beta(nu / 2.0, 0.5, nu / den, t * t / den);
    (0.5 * outside, 0.5 * inside)
}

/// Density of Student's t.
fn t_density(t: f64, nu: f64) -> f64 {
    let ln_c =
        ln_gamma((nu + 1.0) / 2.0) - ln_gamma(nu / 2.0) - 0.5 * (nu * std::f64::consts::PI).ln();
    (ln_c - (nu + 1.0) / 2.0 * (t * t / nu).ln_1p()).exp()
}

/// The p-quantile of Student's t with `dof` degrees of freedom (dof may be fractional).
/// Solved from the tail functions by Newton's method safeguarded by bisection, to full double
/// precision of the incomplete beta. NaN for p outside (0, 1) or dof ≤ 0.
pub fn student_t_quantile(p: f64, dof: f64) -> f64 {
    if !(p > 0.0 && p < 1.0 && dof > 0.0 && dof.is_finite()) {
        return f64::NAN;
    }
    if p == 0.5 {
        return 0.0;
    }
    if p < 0.5 {
        return -student_t_quantile(1.0 - p, dof);
    }
    // Solve in the form whose target is small, to keep its relative precision.
    let tail = 1.0 - p; // P(T > t)
    let inner = p - 0.5; // P(0 < T < t)
    let use_tail = tail < inner;
    // g(t) increasing in t, zero at the quantile.
    let g = |t: f64| {
        let (upper, middle) = t_tails(t, dof);
        if use_tail {
            tail - upper
        } else {
            middle - inner
        }
    };
    let (mut lo, mut hi) = (0.0f64, 1.0f64);
    while g(hi) < 0.0 {
        lo = hi;
        hi *= 2.0;
        if !hi.is_finite() {
            return f64::INFINITY;
        }
    }
    let mut t = 0.5 * (lo + hi);
    for _ in 0..400 {
        let gt = g(t);
        if gt == 0.0 {
            return t;
        }
        if gt < 0.0 {
            lo = t;
        } else {
            hi = t;
        }
        let newton = t - gt / t_density(t, dof);
        let next = if newton > lo && newton < hi {
            newton
        } else {
            0.5 * (lo + hi)
        };
        if (next - t).abs() <= 2.0 * f64::EPSILON * t.abs() || hi - lo <= f64::EPSILON * hi {
            return next;
        }
        t = next;
    }
    t
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn closed_forms_of_the_distributions() {
        // Cauchy (t with 1 dof): quantile tan(π(p − 1/2)) (closed form, common practice).
        for p in [0.6f64, 0.75, 0.9, 0.975, 0.999] {
            let exact = (std::f64::consts::PI * (p - 0.5)).tan();
            let t = student_t_quantile(p, 1.0);
            assert!(
                (t - exact).abs() <= 1e-12 * exact.abs(),
                "{p}: {t} vs {exact}"
            );
        }
        // t with 2 dof: t = (2p − 1) / sqrt(2 p (1 − p)) (closed form, common practice).
        for p in [0.55f64, 0.8, 0.975, 0.9995] {
            let exact = (2.0 * p - 1.0) / (2.0 * p * (1.0 - p)).sqrt();
            let t = student_t_quantile(p, 2.0);
            assert!((t - exact).abs() <= 1e-12 * exact, "{p}: {t} vs {exact}");
        }
        // F(2, d2) upper tail: (1 + 2f/d2)^(−d2/2) (closed form from the density, common practice).
        for (f, d2) in [(0.5f64, 3.0f64), (3.0, 10.0), (40.0, 7.0)] {
            let exact = (1.0 + 2.0 * f / d2).powf(-d2 / 2.0);
            let q = f_upper_tail(f, 2.0, d2);
            assert!(
                (q - exact).abs() <= 1e-13 * exact,
                "{f}, {d2}: {q} vs {exact}"
            );
        }
        // ln Γ(n) = ln (n − 1)! and Γ(1/2) = √π (closed forms).
        assert!((ln_gamma(11.0) - 3_628_800f64.ln()).abs() < 1e-13);
        assert!((ln_gamma(0.5) - std::f64::consts::PI.sqrt().ln()).abs() < 1e-14);
    }

    fn fitted(residuals: Vec<f64>, jacobian: nalgebra::DMatrix<f64>, theta: Vec<f64>) -> LmResult {
        LmResult {
            ssr: residuals.iter().map(|r| r * r).sum(),
            at_bound: vec![false; theta.len()],
            theta,
            residuals,
            jacobian,
            iterations: 1,
            evaluations: 1,
            converged: true,
            reason: String::new(),
        }
    }

    #[test]
    fn a_parameter_without_effect_is_flagged_alone() {
        // r = θ₁ x − y with a second parameter the residuals do not depend on. Straight line
        // through the origin (common practice): Var(θ₁) = s²/Σx², s² = SSR/(N − P).
        let x = [1.0, 2.0, 3.0, 4.0];
        let r = vec![0.1, -0.2, 0.05, 0.1];
        let mut j = nalgebra::DMatrix::zeros(4, 2);
        for i in 0..4 {
            j[(i, 0)] = x[i];
        }
        let st = statistics(&fitted(r.clone(), j, vec![1.0, 5.0]), None).unwrap();
        assert_eq!(st.identifiable, vec![true, false]);
        assert_eq!(st.unidentifiable.len(), 1);
        assert_eq!(st.unidentifiable[0].weights, vec![(1, 1.0)]);
        let ssr: f64 = r.iter().map(|v| v * v).sum();
        let var = ssr / 2.0 / 30.0;
        assert!((st.se[0].unwrap() - var.sqrt()).abs() < 1e-14);
        assert_eq!(st.se[1], None);
        assert_eq!(st.correlation[0][1], None);
        assert_eq!(st.lack_of_fit, None);
        // Distinct groups only: no replicates, no lack-of-fit test.
        let g = [0, 1, 2, 3];
        assert_eq!(
            statistics(
                &fitted(r, nalgebra::DMatrix::zeros(4, 2), vec![1.0, 5.0]),
                Some(&g)
            )
            .unwrap()
            .lack_of_fit,
            None
        );
    }

    #[test]
    fn information_criteria_and_weights() {
        // AIC and BIC as defined (Akaike 1974, Schwarz 1978): N ln(SSR/N) + 2P, + P ln N.
        let (aic, bic) = information_criteria(2.0, 20, 3);
        assert!((aic.unwrap() - (20.0 * 0.1f64.ln() + 6.0)).abs() < 1e-12);
        assert!((bic.unwrap() - (20.0 * 0.1f64.ln() + 3.0 * 20f64.ln())).abs() < 1e-12);
        assert_eq!(information_criteria(0.0, 20, 3), (None, None));
        // Two models 2 AIC units apart: weights 1/(1 + e^-1) and e^-1/(1 + e^-1).
        let w = akaike_weights(&[10.0, 12.0]);
        let e = (-1.0f64).exp();
        assert!((w[0].1 - 1.0 / (1.0 + e)).abs() < 1e-15 && w[1].0 == 2.0);
    }
}
