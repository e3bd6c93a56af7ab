//! The compiled tape: outputs, sharing, batches, counted domain problems.

use incertus_expr::{parse, ShapeError, Tape, LANES};

#[test]
fn formula_and_gradient_share_work() {
    let f = parse("exp(-k*t)*sin(w*t)").unwrap();
    let tape = Tape::gradient(&f, &["k", "t", "w"]).unwrap();
    assert_eq!(tape.n_outputs(), 4);
    // exp(-k*t) and sin(w*t), cos(w*t) are computed once for all outputs.
    let separate: usize = tape
        .formulas()
        .iter()
        .map(|e| {
            Tape::compile(std::slice::from_ref(e), &["k", "t", "w"])
                .unwrap()
                .len()
        })
        .sum();
    assert!(tape.len() < separate, "{} vs {separate}", tape.len());
    assert!(tape.n_registers() < tape.len());
}

#[test]
fn unknown_names_are_errors_with_a_span() {
    let src = "a + b";
    let err = Tape::compile(&[parse(src).unwrap()], &["a"]).unwrap_err();
    assert!(err.message.contains("`b`"));
    assert!(err.render(src).ends_with("    ^"));
}

#[test]
fn batches_of_any_length_agree_with_points() {
    let f = parse("x^3 - 2*x*y + y/(1 + x^2)").unwrap();
    let tape = Tape::gradient(&f, &["x", "y"]).unwrap();
    for n in [0, 1, LANES - 1, LANES, LANES + 1, 3 * LANES + 17] {
        let x: Vec<f64> = (0..n).map(|i| (i as f64 * 0.37).sin() * 3.0).collect();
        let y: Vec<f64> = (0..n).map(|i| (i as f64 * 0.11).cos()).collect();
        let mut out = vec![vec![f64::NAN; n]; 3];
        let mut refs: Vec<&mut [f64]> = out.iter_mut().map(Vec::as_mut_slice).collect();
        let report = tape.eval_batch(&[&x, &y], &mut refs).unwrap();
        assert!(report.all_finite());
        let mut p = [0.0; 3];
        for i in 0..n {
            tape.eval_point(&[x[i], y[i]], &mut p);
            for j in 0..3 {
                assert_eq!(p[j].to_bits(), out[j][i].to_bits());
            }
        }
    }
}

#[test]
fn domain_problems_in_a_batch_are_counted_not_hidden() {
    let src = "sqrt(x) + 1/y";
    let f = parse(src).unwrap();
    let tape = Tape::compile(&[f], &["x", "y"]).unwrap();
    let n = 1000;
    let x: Vec<f64> = (0..n)
        .map(|i| if i % 100 == 7 { -1.0 } else { 2.0 })
        .collect();
    let y: Vec<f64> = (0..n).map(|i| if i == 500 { 0.0 } else { 1.0 }).collect();
    let mut out = vec![0.0; n];
    let report = tape.eval_batch(&[&x, &y], &mut [&mut out]).unwrap();
    assert_eq!(report.non_finite, [11]);
    assert_eq!(report.first_non_finite, [Some(7)]);
    // The tree says why, with a caret under the sub-formula.
    let err = tape.explain_point(0, &[x[7], y[7]]).unwrap_err();
    assert!(err.message.contains("square root of a negative"));
    assert!(err.render(src).ends_with("\n^^^^^^^"));
    let err = tape.explain_point(0, &[x[500], y[500]]).unwrap_err();
    assert!(err.message.contains("division by zero"));
}

#[test]
fn shape_mismatches_are_errors() {
    let tape = Tape::compile(&[parse("a*b").unwrap()], &["a", "b"]).unwrap();
    let a = [1.0; 4];
    let b = [1.0; 3];
    let mut o = [0.0; 4];
    assert_eq!(
        tape.eval_batch(&[&a], &mut [&mut o]),
        Err(ShapeError::Inputs {
            expected: 2,
            found: 1
        })
    );
    assert_eq!(
        tape.eval_batch(&[&a, &b], &mut [&mut o]),
        Err(ShapeError::Length {
            index: 1,
            expected: 4,
            found: 3
        })
    );
    assert_eq!(
        tape.eval_batch(&[&a, &a], &mut []),
        Err(ShapeError::Outputs {
            expected: 1,
            found: 0
        })
    );
}

#[test]
fn constant_sub_formulas_are_folded() {
    let f = parse("x*(2*pi/360) + ln(10)").unwrap();
    let tape = Tape::compile(std::slice::from_ref(&f), &["x"]).unwrap();
    // input, folded constant, multiply, folded ln(10), add
    assert_eq!(tape.len(), 5);
    let mut out = [0.0];
    tape.eval_point(&[90.0], &mut out);
    assert_eq!(out[0], f.eval::<f64, _>(&[("x", 90.0)]).unwrap());
}
