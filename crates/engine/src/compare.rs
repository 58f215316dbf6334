//! Tests of nested models: do the terms the larger model adds matter?
//!
//! Wald test of the added coefficients with the larger model's covariance
//! (clustered or robust when that model asks for it): F = b'V⁻¹b / q on
//! (q, df) degrees of freedom, df being the larger model's inference df.

use statrs::distribution::{ContinuousCDF, FisherSnedecor};

use crate::fit::ModelFit;
use crate::FitError;

#[derive(Clone, Debug, PartialEq)]
pub struct Comparison {
    pub models: Vec<String>,
    /// The F statistic.
    pub statistic: f64,
    /// Numerator and denominator df.
    pub df: (f64, f64),
    pub p: f64,
    /// "wald-f".
    pub method: &'static str,
    /// The coefficients tested.
    pub tested: Vec<String>,
}

/// Compare a smaller model with a larger one that contains all its terms.
pub fn compare(small: &ModelFit, large: &ModelFit) -> Result<Comparison, FitError> {
    let (small, large) = if small.coefficients.len() <= large.coefficients.len() {
        (small, large)
    } else {
        (large, small)
    };
    let err = |message: String| FitError {
        model: large.name.clone(),
        message,
    };
    let terms_large: Vec<&str> = large.coefficients.iter().map(|c| c.term.as_str()).collect();
    if let Some(missing) = small
        .coefficients
        .iter()
        .find(|c| !terms_large.contains(&c.term.as_str()))
    {
        return Err(err(format!(
            "`{}` of model `{}` is not in model `{}`, so the models are not nested",
            missing.term, small.name, large.name
        )));
    }
    if small.n_obs != large.n_obs {
        return Err(err(format!(
            "models `{}` and `{}` were fitted on different rows ({} and {}); a test of nested models needs the same rows",
            small.name, large.name, small.n_obs, large.n_obs
        )));
    }
    let idx: Vec<usize> = large
        .coefficients
        .iter()
        .enumerate()
        .filter(|(_, c)| !small.coefficients.iter().any(|s| s.term == c.term))
        .map(|(i, _)| i)
        .collect();
    let q = idx.len();
    if q == 0 {
        return Err(err(format!(
            "models `{}` and `{}` have the same terms",
            small.name, large.name
        )));
    }
    let b: Vec<f64> = idx
        .iter()
        .map(|&i| large.coefficients[i].estimate)
        .collect();
    let v: Vec<Vec<f64>> = idx
        .iter()
        .map(|&i| idx.iter().map(|&j| large.vcov[(i, j)]).collect())
        .collect();
    let solved = solve(v, b.clone()).ok_or_else(|| {
        err(
            "the covariance of the added coefficients is singular, so the Wald test is not defined"
                .into(),
        )
    })?;
    let wald: f64 = b.iter().zip(&solved).map(|(a, c)| a * c).sum();
    let statistic = wald / q as f64;
    let df2 = large.df_inference;
    let dist = FisherSnedecor::new(q as f64, df2)
        .map_err(|e| err(format!("invalid F distribution: {e}")))?;
    Ok(Comparison {
        models: vec![small.name.clone(), large.name.clone()],
        statistic,
        df: (q as f64, df2),
        p: dist.sf(statistic),
        method: "wald-f",
        tested: idx
            .iter()
            .map(|&i| large.coefficients[i].term.clone())
            .collect(),
    })
}

/// Solve V x = b by Gaussian elimination with partial pivoting (V is small:
/// one row per tested coefficient). `None` when V is singular.
fn solve(mut v: Vec<Vec<f64>>, mut b: Vec<f64>) -> Option<Vec<f64>> {
    let n = b.len();
    let scale = v.iter().flatten().fold(0.0f64, |m, x| m.max(x.abs()));
    for col in 0..n {
        let pivot = (col..n).max_by(|&a, &c| v[a][col].abs().total_cmp(&v[c][col].abs()))?;
        if v[pivot][col].abs() <= 1e-13 * scale {
            return None;
        }
        v.swap(col, pivot);
        b.swap(col, pivot);
        let pivot_row = v[col].clone();
        for row in col + 1..n {
            let f = v[row][col] / pivot_row[col];
            for (a, p) in v[row][col..].iter_mut().zip(&pivot_row[col..]) {
                *a -= f * p;
            }
            b[row] -= f * b[col];
        }
    }
    let mut x = vec![0.0; n];
    for row in (0..n).rev() {
        let s: f64 = (row + 1..n).map(|k| v[row][k] * x[k]).sum();
        x[row] = (b[row] - s) / v[row][row];
    }
    Some(x)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn gaussian_elimination_solves_and_detects_singularity() {
        let x = solve(vec![vec![4.0, 1.0], vec![1.0, 3.0]], vec![1.0, 2.0]).unwrap();
        assert!((4.0 * x[0] + x[1] - 1.0).abs() < 1e-14 && (x[0] + 3.0 * x[1] - 2.0).abs() < 1e-14);
        assert!(solve(vec![vec![1.0, 2.0], vec![2.0, 4.0]], vec![1.0, 2.0]).is_none());
    }
}
