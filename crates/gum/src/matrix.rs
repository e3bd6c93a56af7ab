//! Small dense matrix helpers: the check that a correlation matrix is valid
//! (unit diagonal, |r| ≤ 1, positive semi-definite) with a message naming
//! the input at fault, and the products of the law of propagation.

use crate::model::{Correlation, Input};

/// Check the correlation matrix of the inputs; the error names the inputs
/// whose correlations make it impossible.
///
/// A correlation matrix must be positive semi-definite (JCGM 101:2008,
/// 3.21 and 6.4.8.2): no combination of the inputs may have negative
/// variance. The check is a Cholesky factorisation with a tolerance that
/// accepts singular (semi-definite) matrices, as produced by perfectly
/// correlated inputs or by fewer observations than inputs observed together.
pub fn check_correlations(inputs: &[Input], correlations: &[Correlation]) -> Result<(), String> {
    if correlations.is_empty() {
        return Ok(());
    }
    // Only the inputs that take part matter.
    let mut idx: Vec<usize> = correlations.iter().flat_map(|c| [c.a, c.b]).collect();
    idx.sort_unstable();
    idx.dedup();
    let n = idx.len();
    let mut r = vec![vec![0.0; n]; n];
    for (i, row) in r.iter_mut().enumerate() {
        row[i] = 1.0;
    }
    for c in correlations {
        let a = idx.binary_search(&c.a).expect("collected above");
        let b = idx.binary_search(&c.b).expect("collected above");
        r[a][b] = c.coefficient;
        r[b][a] = c.coefficient;
    }
    match cholesky_semidefinite(&r) {
        Ok(_) => Ok(()),
        Err(k) => {
            let name = &inputs[idx[k]].name;
            let partners: Vec<String> = correlations
                .iter()
                .filter_map(|c| {
                    let other = if c.a == idx[k] {
                        c.b
                    } else if c.b == idx[k] {
                        c.a
                    } else {
                        return None;
                    };
                    (idx.binary_search(&other).ok()? < k)
                        .then(|| format!("{} ({})", inputs[other].name, c.coefficient))
                })
                .collect();
            Err(format!(
                "the correlation coefficients are inconsistent: no set of quantities can have them \
                 (the matrix is not positive semi-definite); the problem shows at `{name}`, \
                 correlated with {}",
                if partners.is_empty() {
                    "earlier inputs".to_string()
                } else {
                    partners.join(", ")
                }
            ))
        }
    }
}

/// Lower-triangular L with L Lᵀ = A for a symmetric positive semi-definite A.
/// On failure returns the index of the row where a negative pivot appeared.
/// Pivots within a relative 1e-10 of zero are taken as zero (semi-definite).
pub fn cholesky_semidefinite(a: &[Vec<f64>]) -> Result<Vec<Vec<f64>>, usize> {
    let n = a.len();
    let mut l = vec![vec![0.0; n]; n];
    let scale = (0..n)
        .map(|i| a[i][i].abs())
        .fold(0.0, f64::max)
        .max(f64::MIN_POSITIVE);
    let tol = 1e-10 * scale;
    for j in 0..n {
        let d = a[j][j] - (0..j).map(|k| l[j][k] * l[j][k]).sum::<f64>();
        if d < -tol {
            return Err(j);
        }
        if d <= tol {
            // Zero pivot: the rest of the column must vanish too.
            for i in j + 1..n {
                let s = a[i][j] - (0..j).map(|k| l[i][k] * l[j][k]).sum::<f64>();
                if s.abs() > 1e-8 * scale {
                    return Err(i);
                }
            }
            continue;
        }
        let djj = d.sqrt();
        l[j][j] = djj;
        for i in j + 1..n {
            let s = a[i][j] - (0..j).map(|k| l[i][k] * l[j][k]).sum::<f64>();
            l[i][j] = s / djj;
        }
    }
    Ok(l)
}

/// xᵀ A y.
pub fn quad(x: &[f64], a: &[Vec<f64>], y: &[f64]) -> f64 {
    let mut s = 0.0;
    for (i, row) in a.iter().enumerate() {
        if x[i] == 0.0 {
            continue;
        }
        let mut t = 0.0;
        for (j, v) in row.iter().enumerate() {
            t += v * y[j];
        }
        s += x[i] * t;
    }
    s
}
