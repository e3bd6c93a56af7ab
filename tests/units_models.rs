//! Units in model files: a model in laboratory units gives the same numbers
//! as its twin in coherent SI, and dimension errors are located.

mod common;
use common::{incertus, scratch, write};

use incertus::gum::{load_str, propagate, Options};

/// The Guggenheim-Smith expression for the dipole moment (the formula of
/// the dipole issue): μ² = 27 ε0 k_B T M2 (a_eps − a_n) / (N_A ρ1 (ε1 + 2)²).
/// The input values are illustrative (of the size met in dilute benzene
/// solutions); the check is that units convert, not the values themselves.
const FORMULA: &str = "sqrt(27*e0*kB*T*M2*(a_eps - a_n)/(NA*rho1*(eps1 + 2)^2))";

fn twin(lab: bool) -> String {
    let (t, m, rho, unit) = if lab {
        (
            "value = 25.0\nstandard_uncertainty = 0.1\nunit = \"degC\"",
            "value = 123.11\nstandard_uncertainty = 0.01\nunit = \"g/mol\"",
            "value = 0.8737\nstandard_uncertainty = 0.0002\nunit = \"g/cm^3\"",
            "D",
        )
    } else {
        (
            "value = 298.15\nstandard_uncertainty = 0.1\nunit = \"K\"",
            "value = 0.12311\nstandard_uncertainty = 0.00001\nunit = \"kg/mol\"",
            "value = 873.7\nstandard_uncertainty = 0.2\nunit = \"kg/m^3\"",
            "C m",
        )
    };
    format!(
        "[inputs.e0]\nconstant = \"epsilon_0\"\n[inputs.kB]\nconstant = \"k_B\"\n[inputs.NA]\nconstant = \"N_A\"\n\
         [inputs.T]\n{t}\n[inputs.M2]\n{m}\n[inputs.rho1]\n{rho}\n\
         [inputs.a_eps]\nvalue = 12.3\nstandard_uncertainty = 0.2\n[inputs.a_n]\nvalue = 0.31\nstandard_uncertainty = 0.02\n\
         [inputs.eps1]\nvalue = 2.2725\nstandard_uncertainty = 0.0005\n\
         [[measurands]]\nname = \"mu\"\nunit = \"{unit}\"\nformula = \"{FORMULA}\"\n"
    )
}

#[test]
fn laboratory_units_give_the_numbers_of_the_si_twin() {
    let si = propagate(
        &load_str(&twin(false), "si.toml").unwrap(),
        &Options::default(),
    )
    .unwrap();
    let lab = propagate(
        &load_str(&twin(true), "lab.toml").unwrap(),
        &Options::default(),
    )
    .unwrap();
    let (a, b) = (&si.results[0], &lab.results[0]);
    // 1 D = 10⁻²¹/c C m (common practice of dipole-moment work).
    let debye = 1e-21 / 299_792_458.0;
    assert!(
        (b.value * debye / a.value - 1.0).abs() < 1e-12,
        "{} D vs {} C m",
        b.value,
        a.value
    );
    assert!((b.standard_uncertainty * debye / a.standard_uncertainty - 1.0).abs() < 1e-12);
    assert!(
        (1.0..10.0).contains(&b.value),
        "a dipole moment of a few debye: {}",
        b.value
    );
    // The same budget shares, whatever the units.
    for (x, y) in a.budget.iter().zip(&b.budget) {
        assert!((x.share - y.share).abs() < 1e-12, "{}", x.input);
    }
    // The budget shows each input in its own unit: T in °C.
    let t = b.budget.iter().find(|l| l.input == "T").unwrap();
    assert!((t.value - 25.0).abs() < 1e-12);
    assert_eq!(t.unit.as_deref(), Some("degC"));
}

#[test]
fn dimension_errors_are_located() {
    let dir = scratch("dims");
    let cases: &[(&str, &str, &str)] = &[
        ("[inputs.a]\nvalue = 1\nunit = \"m\"\n[inputs.b]\nvalue = 1\nunit = \"kg\"\n[[measurands]]\nname = \"y\"\nformula = \"a + b\"\n",
         "this term has dimension kg but the first term of the sum has m", "a + b\n    ^"),
        ("[inputs.a]\nvalue = 1\nunit = \"m\"\n[[measurands]]\nname = \"y\"\nformula = \"2*exp(a)\"\n",
         "the argument of exp must be dimensionless, but it has dimension m", "2*exp(a)\n      ^"),
        ("[inputs.a]\nvalue = 1\nunit = \"m\"\n[[measurands]]\nname = \"y\"\nformula = \"a^1.5\"\n",
         "m raised to 3/2 has no whole dimension", "a^1.5\n^^^^^"),
        ("[inputs.a]\nvalue = 1\nunit = \"m\"\n[[measurands]]\nname = \"y\"\nunit = \"kg\"\nformula = \"a*2\"\n",
         "the formula of `y` has dimension m, but its unit `kg` has dimension kg", ""),
        ("[inputs.a]\nvalue = 1\nunit = \"kg/mx\"\n[[measurands]]\nname = \"y\"\nformula = \"a\"\n",
         "unknown unit `mx`", "kg/mx\n   ^^"),
        ("[inputs.a]\nvalue = 1\nunit = \"m\"\n[inputs.b]\nvalue = 2\nunit = \"s\"\n[[measurands]]\nname = \"y\"\nformula = \"a^b\"\n",
         "an exponent must be dimensionless", "a^b\n  ^"),
        ("[inputs.a]\nvalue = 1\nunit = \"m\"\n[[measurands]]\nname = \"y\"\nformula = \"sqrt(a)\"\n",
         "the square root of a quantity of dimension m has no whole dimension", "sqrt(a)\n^^^^^^^"),
    ];
    for (i, (text, fragment, caret)) in cases.iter().enumerate() {
        let p = write(&dir, &format!("d{i}.toml"), text);
        let (code, _, err) = incertus(&["eval", p.to_str().unwrap()]);
        assert_eq!(code, 1, "case {i}");
        assert!(
            err.contains(fragment),
            "case {i}: expected {fragment:?} in\n{err}"
        );
        assert!(
            err.contains(&format!("d{i}.toml:")),
            "case {i}: names the file and line: {err}"
        );
        if !caret.is_empty() {
            assert!(
                err.trim_end().ends_with(caret),
                "case {i}: caret {caret:?} in\n{err}"
            );
        }
    }
}

#[test]
fn the_lab_model_runs_from_the_binary_with_monte_carlo() {
    let dir = scratch("lab");
    let p = write(&dir, "lab.toml", &twin(true));
    let (code, out, err) = incertus(&["eval", p.to_str().unwrap(), "--mc", "100000"]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains(" D   (in parentheses"), "{out}");
    assert!(out.contains("coverage interval"), "{out}");
}

#[test]
fn celsius_points_and_intervals() {
    // SI Brochure (9th ed.), 2.3.1: t/°C = T/K − 273.15; a difference of
    // Celsius temperatures is the same number in K. Every reading here is in
    // °C; c is a correction in K (a difference).
    let cases: &[(&str, f64)] = &[
        ("t1 - t2", 20.5 - 4.2), // a difference: an interval
        ("t2 - t1", 4.2 - 20.5),
        ("t1 + c", 20.5 + 0.05),             // a point plus an interval
        ("(t1 + t2)/2", (20.5 + 4.2) / 2.0), // a mean
        ("w*t1 + (1 - w)*t2", 0.3 * 20.5 + 0.7 * 4.2), // weights summing to 1
        ("2*(t1 - t2) + t2", 2.0 * (20.5 - 4.2) + 4.2), // a point again
        ("k*(t1 - t2)", 1.5 * (20.5 - 4.2)), // a scaled difference
        ("t1", 20.5),
    ];
    for (formula, expected) in cases {
        let text = format!(
            "[inputs.t1]\nvalue = 20.5\nstandard_uncertainty = 0.1\nunit = \"degC\"\n\
             [inputs.t2]\nvalue = 4.2\nstandard_uncertainty = 0.1\nunit = \"degC\"\n\
             [inputs.c]\nvalue = 0.05\nstandard_uncertainty = 0.01\nunit = \"K\"\n\
             [inputs.w]\nvalue = 0.3\nstandard_uncertainty = 0.01\n\
             [inputs.k]\nvalue = 1.5\n\
             [[measurands]]\nname = \"y\"\nformula = \"{formula}\"\nunit = \"degC\"\n"
        );
        let model =
            incertus_gum::load_str(&text, "t.toml").unwrap_or_else(|e| panic!("{formula}: {e}"));
        let r = incertus_gum::propagate(&model, &Default::default()).unwrap();
        assert!(
            (r.results[0].value - expected).abs() < 1e-9,
            "{formula}: {} °C, expected {expected}",
            r.results[0].value
        );
    }
    // Neither a point nor an interval: refused with the formula located.
    for formula in ["t1 + t2", "2*t1", "t1*t2/t2 + t2", "w*t1 + w*t2"] {
        let text = format!(
            "[inputs.t1]\nvalue = 20.5\nstandard_uncertainty = 0.1\nunit = \"degC\"\n\
             [inputs.t2]\nvalue = 4.2\nstandard_uncertainty = 0.1\nunit = \"degC\"\n\
             [inputs.w]\nvalue = 0.3\nstandard_uncertainty = 0.01\n\
             [[measurands]]\nname = \"y\"\nformula = \"{formula}\"\nunit = \"degC\"\n"
        );
        let e = incertus_gum::load_str(&text, "t.toml")
            .unwrap_err()
            .to_string();
        assert!(
            e.contains("scale with an offset") && e.contains("formula"),
            "{formula}: {e}"
        );
    }
}
