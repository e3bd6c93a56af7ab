//! Units against the definitions of the SI Brochure (9th edition, 2019).

use incertus_units::{parse, Dimension};

fn close(a: f64, b: f64) -> bool {
    (a - b).abs() <= 1e-14 * b.abs()
}

#[test]
fn the_units_laboratories_write() {
    // SI Brochure, 9th edition: Table 7 (prefixes), Table 8 (litre = dm³,
    // tonne = 1000 kg, bar = 100 kPa, minute, hour, ångström = 0.1 nm in its
    // older editions), 2.3.4 (units with special names).
    for (unit, f, dim) in [
        ("g/mol", 1e-3, "kg mol^-1"),
        ("kg m^-3", 1.0, "m^-3 kg"),
        ("kg/m^3", 1.0, "m^-3 kg"),
        ("g/cm^3", 1e3, "m^-3 kg"),
        ("L", 1e-3, "m^3"),
        ("mL", 1e-6, "m^3"),
        ("mg", 1e-6, "kg"),
        ("g/L", 1.0, "m^-3 kg"),
        ("mm", 1e-3, "m"),
        ("nm", 1e-9, "m"),
        ("µm", 1e-6, "m"),
        ("um", 1e-6, "m"),
        ("K", 1.0, "K"),
        ("J/K", 1.0, "m^2 kg s^-2 K^-1"),
        ("F/m", 1.0, "m^-3 kg^-1 s^4 A^2"),
        ("C m", 1.0, "m s A"),
        ("1/mol", 1.0, "mol^-1"),
        ("Å", 1e-10, "m"),
        ("bar", 1e5, "m^-1 kg s^-2"),
        ("Pa", 1.0, "m^-1 kg s^-2"),
        ("ppm", 1e-6, "1"),
        ("%", 1e-2, "1"),
        ("J/(mol K)", 1.0, "m^2 kg s^-2 K^-1 mol^-1"),
        ("J/mol/K", 1.0, "m^2 kg s^-2 K^-1 mol^-1"),
        ("m²", 1.0, "m^2"),
        ("s⁻¹", 1.0, "s^-1"),
        ("(m^3)^(2/3)", 1.0, "m^2"),
        ("kPa", 1e3, "m^-1 kg s^-2"),
        ("min", 60.0, "s"),
        ("h", 3600.0, "s"),
        ("t", 1e3, "kg"),
        ("eV", 1.602176634e-19, "m^2 kg s^-2"),
        ("mmol/L", 1.0, "m^-3 mol"),
        ("µg/dL", 1e-5, "m^-3 kg"), // 1e-9 kg / 1e-4 m^3
    ] {
        let u = parse(unit).unwrap_or_else(|e| panic!("{}", e.render(unit)));
        assert!(close(u.factor, f), "{unit}: factor {} vs {f}", u.factor);
        assert_eq!(u.dimension.to_string(), dim, "{unit}");
    }
}

#[test]
fn debye_and_celsius() {
    // 1 D = 10⁻²¹/c C m (CGS definition; common practice of dipole-moment
    // work) = 3.33564095...e-30 C m.
    let d = parse("D").unwrap();
    assert_eq!(d.dimension, parse("C m").unwrap().dimension);
    assert!(close(d.factor, 1e-21 / 299_792_458.0));
    assert!((d.factor - 3.335_640_95e-30).abs() < 1e-38);
    // SI Brochure, 2.3.1: t/°C = T/K − 273.15; a difference or an
    // uncertainty in °C is the same number in K.
    let c = parse("degC").unwrap();
    assert_eq!(c.value_to_si(25.0), 298.15);
    assert_eq!(c.difference_to_si(0.2), 0.2);
    assert_eq!(c.value_from_si(273.15), 0.0);
    assert_eq!(parse("°C").unwrap().offset, 273.15);
    // In a compound unit, an interval: 1/°C is 1/K.
    let a = parse("1/degC").unwrap();
    assert_eq!(
        (a.factor, a.offset, a.dimension),
        (1.0, 0.0, parse("K^-1").unwrap().dimension)
    );
}

#[test]
fn errors_are_located() {
    for (text, fragment, col) in [
        ("kg/mx", "unknown unit `mx`", 3),
        ("m^x", "integer power", 1),
        ("m^(1/2)", "fractional dimension", 0),
        ("J/(mol K", "expected `)`", 2),
        ("m $", "expected a unit symbol, found `$`", 2),
    ] {
        let e = parse(text).unwrap_err();
        assert!(e.message.contains(fragment), "{text}: {}", e.message);
        assert_eq!(e.start, col, "{text}");
        let r = e.render(text);
        assert!(r.lines().last().unwrap().ends_with('^'), "{r}");
    }
}

#[test]
fn dimension_arithmetic() {
    let l = parse("m").unwrap().dimension;
    assert_eq!(l.pow(3, 1).unwrap().pow(1, 3), Some(l));
    assert_eq!(l.pow(1, 2), None);
    assert!((l / l).is_one());
    assert_eq!(Dimension::ONE.to_string(), "1");
}

#[test]
fn unclosed_power_parenthesis_is_an_error_not_a_panic() {
    // Found by tests/fuzz.rs (regression tests/fuzz/regressions/shell/).
    for text in ["mm^(2", "m^(", "kg^(1/2", "m**(3"] {
        let e = parse(text).unwrap_err();
        assert!(e.message.contains("not closed"), "{text}: {}", e.message);
        assert!(e.end <= text.len(), "{text}");
    }
}
