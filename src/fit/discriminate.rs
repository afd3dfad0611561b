//! Model discrimination: several candidate studies fitted to the same data, ranked by AIC
//! (with ΔAIC and Akaike weights exp(−ΔAIC/2)/Σ; BIC beside it), and an F-test for every pair
//! where one candidate is nested in the other (common practice; Burnham & Anderson, "Model
//! Selection and Multimodel Inference", 2002, from memory).
//!
//! Nesting rule: candidate A is nested in B when every reaction of A is a reaction of B (the
//! same id and the same net stoichiometry over the same species names) and every estimated
//! path of A is estimated in B, and B estimates more parameters. Then
//! F = ((SSR_A − SSR_B)/(P_B − P_A)) / (SSR_B/(N − P_B)).

use super::Fitted;
use super::setup::FitError;
use super::statistics::{akaike_weights, nested_f_test};
use crate::model::Network;
use serde::Serialize;

#[derive(Debug, Clone, Serialize)]
pub struct Ranked {
    pub study: String,
    pub aic: f64,
    pub delta_aic: f64,
    pub weight: f64,
    pub bic: Option<f64>,
}

#[derive(Debug, Clone, Serialize)]
pub struct NestedTest {
    pub simpler: String,
    pub fuller: String,
    #[serde(rename = "F")]
    pub f: f64,
    pub df1: usize,
    pub df2: usize,
    pub p: f64,
}

/// The ranking and the nested tests of several fitted candidates.
#[derive(Debug, Clone, Serialize)]
pub struct Discrimination {
    pub ranking: Vec<Ranked>,
    pub f_tests: Vec<NestedTest>,
}

/// Each reaction as (id, net coefficients by species name, sorted).
fn reactions(net: &Network) -> Vec<(String, Vec<(String, String)>)> {
    net.reactions
        .iter()
        .map(|r| {
            let mut nu: Vec<(String, String)> = r
                .net_exact
                .iter()
                .map(|(j, v)| (net.species[*j].name.clone(), v.to_string()))
                .collect();
            nu.sort();
            (r.id.clone(), nu)
        })
        .collect()
}

/// Whether `a` is nested in `b` (see the module documentation).
pub fn nested_in(a: &Fitted, b: &Fitted) -> bool {
    let (ra, rb) = (
        reactions(&a.setup.runs[0].network),
        reactions(&b.setup.runs[0].network),
    );
    let pa: Vec<&str> = a.setup.params.iter().map(|p| p.path.as_str()).collect();
    let pb: Vec<&str> = b.setup.params.iter().map(|p| p.path.as_str()).collect();
    pb.len() > pa.len() && ra.iter().all(|r| rb.contains(r)) && pa.iter().all(|p| pb.contains(p))
}

/// Check that the candidates were fitted to the same measurements.
pub fn same_data(fits: &[Fitted]) -> Result<(), FitError> {
    let first = &fits[0].setup.data;
    for f in &fits[1..] {
        let d = &f.setup.data;
        let same = d.independent == first.independent
            && d.columns.len() == first.columns.len()
            && d.columns
                .iter()
                .zip(&first.columns)
                .all(|(a, b)| a.species == b.species && a.unit == b.unit)
            && d.samples.len() == first.samples.len()
            && d.samples
                .iter()
                .zip(&first.samples)
                .all(|(a, b)| a.run == b.run && a.x == b.x && a.values == b.values);
        if !same {
            return Err(FitError::Invalid(format!(
                "{} and {} are fitted to different data ({} and {}): candidates are compared on the same measurements",
                fits[0].setup.file, f.setup.file, first.file, d.file
            )));
        }
        if f.setup.errors != fits[0].setup.errors {
            return Err(FitError::Invalid(format!(
                "{} and {} weight the data differently (their `fit.error` differ): candidates are compared with the same weights",
                fits[0].setup.file, f.setup.file
            )));
        }
    }
    Ok(())
}

/// Rank the candidates by AIC and test each nested pair.
pub fn discriminate(fits: &[Fitted]) -> Result<Discrimination, FitError> {
    same_data(fits)?;
    let aic: Vec<f64> = fits
        .iter()
        .map(|f| {
            f.report.aic.ok_or_else(|| {
                FitError::Failed(format!(
                    "{}: the fit is exact (SSR = 0), so AIC is not defined and the candidates cannot be ranked",
                    f.setup.file
                ))
            })
        })
        .collect::<Result<_, _>>()?;
    let weights = akaike_weights(&aic);
    let mut ranking: Vec<Ranked> = fits
        .iter()
        .zip(&aic)
        .zip(weights)
        .map(|((f, &a), (d, w))| Ranked {
            study: f.setup.file.clone(),
            aic: a,
            delta_aic: d,
            weight: w,
            bic: f.report.bic,
        })
        .collect();
    ranking.sort_by(|a, b| a.aic.total_cmp(&b.aic));
    let mut f_tests = Vec::new();
    for a in fits {
        for b in fits {
            if std::ptr::eq(a, b) || !nested_in(a, b) {
                continue;
            }
            let t = nested_f_test(
                a.report.ssr,
                a.report.parameters,
                b.report.ssr,
                b.report.parameters,
                b.report.observations,
            )
            .map_err(FitError::Failed)?;
            f_tests.push(NestedTest {
                simpler: a.setup.file.clone(),
                fuller: b.setup.file.clone(),
                f: t.f,
                df1: t.df1,
                df2: t.df2,
                p: t.p,
            });
        }
    }
    Ok(Discrimination { ranking, f_tests })
}
