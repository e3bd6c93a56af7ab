//! The parts of a measurand's evaluation that stand on their own: the
//! range check, the conformity assessment, the covariance of the
//! measurands and the higher-order terms.

use super::*;

/// A result and its uncertainty must be finite and normal numbers.
pub(super) fn check_range(m: &Measurand, y: f64, uc: f64) -> Result<(), PropagationError> {
    if !uc.is_finite() {
        return Err(perr_of(
            PropagationErrorKind::Range,
            format!(
                "the combined standard uncertainty of `{}` is not a finite number: a contribution \
                 c·u(x) exceeds the range of double precision (about 1.8e308); express the model in \
                 units that keep its values well inside that range",
                m.name
            ),
            None,
        )
        .at(m.line));
    }
    let subnormal = |v: f64| v != 0.0 && v.abs() < f64::MIN_POSITIVE;
    if subnormal(y) || subnormal(uc) {
        return Err(perr_of(
            PropagationErrorKind::Range,
            format!(
                "the result of `{}` or its uncertainty lies below the normal range of double \
                 precision (about 2.2e-308), where digits are lost to underflow; express the model \
                 in units that keep its values well inside that range",
                m.name
            ),
            None,
        )
        .at(m.line));
    }
    Ok(())
}

/// The conformity assessment of a result (JCGM 106:2012); a decision on a
/// result with warnings is marked for review.
pub(super) fn assess_conformity(
    r: &mut MeasurandResult,
    spec: &crate::conformity::Specification,
    p: f64,
    unit: Option<&str>,
    words: bool,
) -> Result<(), PropagationError> {
    let belief = crate::conformity::Belief {
        value: r.value,
        standard_uncertainty: r.expanded_uncertainty / r.coverage_factor,
        dof: r.effective_dof_used,
    };
    let assess = if words {
        crate::conformity::assess
    } else {
        crate::conformity::assess_figures
    };
    let mut c = assess(
        spec,
        belief,
        r.expanded_uncertainty,
        r.coverage_factor,
        p,
        unit,
    )
    .map_err(|e| {
        perr_of(
            PropagationErrorKind::Conformity,
            format!("measurand `{}`: {e}", r.name),
            None,
        )
    })?;
    if !r.warnings.is_empty() {
        c.statement = format!(
            "NOT VALID WITHOUT REVIEW: the first-order result of `{}` this decision rests on \
             is not reliable here ({} warning{} with the result; check it by propagation of \
             distributions). {}",
            r.name,
            r.warnings.len(),
            if r.warnings.len() == 1 { "" } else { "s" },
            c.statement
        );
        c.notes.extend(r.warnings.iter().cloned());
    }
    r.conformity = Some(c);
    Ok(())
}

/// Correlation and covariance of the measurands: C V Cᵀ (JCGM 102:2011,
/// 6.2.1.3), in the measurands' units; the diagonal from the scaled
/// computation, for consistency.
pub(super) fn output_covariance(
    model: &Model,
    results: &[MeasurandResult],
    sens_rows: &[Vec<f64>],
) -> (NamedMatrix, NamedMatrix) {
    let v = model.covariance();
    let m = results.len();
    let f: Vec<f64> = model
        .measurands
        .iter()
        .map(Measurand::unit_factor)
        .collect();
    let mut cov = vec![vec![0.0; m]; m];
    for a in 0..m {
        for b in 0..=a {
            let q = crate::matrix::quad(&sens_rows[a], &v, &sens_rows[b]) / (f[a] * f[b]);
            cov[a][b] = q;
            cov[b][a] = q;
        }
    }
    for (a, r) in results.iter().enumerate() {
        cov[a][a] = r.standard_uncertainty * r.standard_uncertainty;
    }
    let mut corr = vec![vec![0.0; m]; m];
    for a in 0..m {
        for b in 0..m {
            let (ua, ub) = (
                results[a].standard_uncertainty,
                results[b].standard_uncertainty,
            );
            corr[a][b] = if a == b {
                1.0
            } else if ua > 0.0 && ub > 0.0 {
                (cov[a][b] / ua / ub).clamp(-1.0, 1.0)
            } else {
                0.0
            };
        }
    }
    let names: Vec<String> = results.iter().map(|r| r.name.clone()).collect();
    (
        NamedMatrix {
            names: names.clone(),
            matrix: corr,
        },
        NamedMatrix { names, matrix: cov },
    )
}

/// u_c with the higher-order terms of JCGM 100:2008, 5.1.2 (note):
/// u² = Σ c_i² u_i² + Σ_i Σ_j [½ (∂²f/∂x_i∂x_j)² + ∂f/∂x_i · ∂³f/∂x_i∂x_j²] u_i² u_j²,
/// valid for independent, normally distributed inputs; refused when the
/// inputs of the measurand are correlated.
// The arguments are the pieces of one measurand's budget; a struct for them
// would be used only here.
#[allow(clippy::too_many_arguments)]
pub(super) fn second_order(
    model: &Model,
    name: &str,
    f: &Expr,
    used: &[usize],
    u: &[f64],
    uc: f64,
    env: &[(&str, f64)],
    max_nodes: u64,
) -> Result<f64, PropagationError> {
    if let Some(c) = model
        .correlations
        .iter()
        .find(|c| c.coefficient != 0.0 && used.contains(&c.a) && used.contains(&c.b))
    {
        return Err(perr_of(
            PropagationErrorKind::Method,
            format!(
                "`{name}`: the higher-order terms of JCGM 100:2008, 5.1.2 hold for independent inputs \
                 only, and `{}` and `{}` are correlated; use propagation of distributions instead",
                model.inputs[c.a].name, model.inputs[c.b].name
            ),
            None,
        ));
    }
    let f = simplify(f);
    let names: Vec<&str> = used
        .iter()
        .map(|&i| model.inputs[i].name.as_str())
        .collect();
    let eval = |e: &Expr, what: &str| -> Result<f64, PropagationError> {
        e.eval(env).map_err(|err| {
            perr(
                format!(
                    "`{name}`: the {what} is not defined at the input estimates: {}",
                    err.message
                ),
                Some(print(e)),
            )
        })
    };
    let firsts: Vec<Expr> = names
        .iter()
        .map(|w| checked_derivative(&f, w, max_nodes, name))
        .collect::<Result<_, _>>()?;
    // The terms in the unit of y: b = f_i u_i, a = f_ij u_i u_j,
    // c = f_ijj u_i u_j². They are scaled by the largest of them and u_c
    // before squaring, so that nothing under- or overflows; the higher-order
    // terms count also when every first-order coefficient is zero
    // (u_c = 0, the product of two zero estimates).
    let mut terms: Vec<(f64, f64, f64)> = Vec::new();
    for (a, &i) in used.iter().enumerate() {
        if u[i] == 0.0 {
            continue;
        }
        let fi = eval(&firsts[a], "first derivative")?;
        for (b, &j) in used.iter().enumerate() {
            if u[j] == 0.0 {
                continue;
            }
            let fij_e = checked_derivative(&firsts[a], names[b], max_nodes, name)?;
            let fij = eval(&fij_e, "second derivative")?;
            let fijj = eval(
                &checked_derivative(&fij_e, names[b], max_nodes, name)?,
                "third derivative",
            )?;
            terms.push((fi * u[i], fij * u[i] * u[j], fijj * u[i] * u[j] * u[j]));
        }
    }
    let scale = terms
        .iter()
        .flat_map(|&(b, a, c)| [b.abs(), a.abs(), c.abs()])
        .fold(uc, f64::max);
    if scale == 0.0 {
        return Ok(0.0);
    }
    if !scale.is_finite() {
        return Err(perr_of(
            PropagationErrorKind::Range,
            format!("`{name}`: the higher-order terms are not finite at the input estimates"),
            None,
        ));
    }
    let mut total = (uc / scale) * (uc / scale);
    for &(b, a, c) in &terms {
        let (b, a, c) = (b / scale, a / scale, c / scale);
        total += 0.5 * a * a + b * c;
    }
    if total < 0.0 {
        return Err(perr_of(
            PropagationErrorKind::Method,
            format!("`{name}`: the higher-order terms make the variance negative; the model is too far from linear for this approximation"),
            None,
        ));
    }
    Ok(scale * total.sqrt())
}
