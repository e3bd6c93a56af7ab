//! The unit of a sensitivity coefficient, `quotient(y, x)`, over a grid of
//! units: it always parses, to the dimension and factor of unit(y)/unit(x)
//! (the definition of ∂y/∂x's unit; a derivation, no published source
//! needed), and equal symbols cancel.

use incertus_units::{parse, quotient};

const UNITS: &[&str] = &[
    "",
    "1",
    "m",
    "mm",
    "mm^3",
    "m²",
    "kg m^-3",
    "g/mL",
    "g/cm^3",
    "mol/L",
    "J/(kg*K)",
    "K",
    "degC",
    "°C",
    "Pa",
    "kPa",
    "s",
    "ms",
    "m/s^2",
    "uL",
    "µm",
    "ohm",
    "%",
    "ppm",
    "(m^3)^(2/3)",
    "N*m",
    "kg·m²",
    "A s",
    "m**2",
    "V/m",
    "1/K",
    "W/(m K)",
    "1/(mg/L)",
    "(mg/L)^2",
    "m⁻³",
    "kg/m/s",
    "mol/(L s)^2",
];

#[test]
fn the_quotient_parses_to_the_quotient_of_the_units() {
    for y in UNITS {
        for x in UNITS {
            let q = quotient(y, x);
            let got = parse(&q).unwrap_or_else(|e| panic!("{y} / {x} -> `{q}`: {e:?}"));
            let (uy, ux) = (parse(y).unwrap(), parse(x).unwrap());
            assert_eq!(
                got.dimension,
                uy.dimension / ux.dimension,
                "{y} / {x} -> `{q}`"
            );
            let want = uy.factor / ux.factor;
            assert!(
                (got.factor - want).abs() <= 1e-12 * want.abs(),
                "{y} / {x} -> `{q}`: factor {} vs {want}",
                got.factor
            );
        }
    }
}

#[test]
fn equal_symbols_cancel_and_plain_products_stay_plain() {
    assert_eq!(quotient("mm^3", "mm"), "mm^2");
    assert_eq!(quotient("mm", "mm"), "");
    assert_eq!(quotient("kg m^-3", "kg"), "1/m^3");
    assert_eq!(quotient("g/mL", "K"), "g/(mL*K)");
    assert_eq!(quotient("mm", "m"), "mm/m");
    assert_eq!(quotient("", "degC"), "1/degC");
    assert_eq!(quotient("m²", "m"), "m");
    assert_eq!(quotient("mm^3", "1/K"), "mm^3*K");
    assert_eq!(quotient("1/K", "1/K"), "");
    assert_eq!(quotient("(m^3)^(2/3)", "m"), "((m^3)^(2/3))/(m)");
    assert_eq!(quotient("mg/L", "1/(mg/L)"), "mg^2/L^2");
    assert_eq!(quotient("J/(kg*K)", "J"), "1/(kg*K)");
    assert_eq!(quotient("W/(m K)", "W m^-1"), "1/K");
    assert_eq!(quotient("mm³", "mm"), "mm^2");
}

#[test]
fn the_square_parses_to_the_square_of_the_unit() {
    for u in UNITS {
        let s = incertus_units::squared(u);
        let got = parse(&s).unwrap_or_else(|e| panic!("{u}² -> `{s}`: {e:?}"));
        let want = parse(u).unwrap();
        assert_eq!(got.dimension, want.dimension * want.dimension, "{u} -> {s}");
        let f = want.factor * want.factor;
        assert!((got.factor - f).abs() <= 1e-12 * f, "{u} -> {s}");
    }
}

#[test]
fn powers_parse_to_the_power_of_the_unit() {
    for u in UNITS {
        for n in -3..=3 {
            let s = incertus_units::power(u, n);
            let got = parse(&s).unwrap_or_else(|e| panic!("{u}^{n} -> `{s}`: {e:?}"));
            let want = parse(u).unwrap();
            assert_eq!(
                got.dimension,
                want.dimension.pow(n, 1).unwrap(),
                "{u}^{n} -> {s}"
            );
            let f = want.factor.powi(n);
            assert!((got.factor - f).abs() <= 1e-12 * f, "{u}^{n} -> {s}");
        }
    }
}
