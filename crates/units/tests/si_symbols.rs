//! Units written as the SI Brochure prints them (9th ed., 2019, 5.4: unit
//! symbols, powers as superscripts, µ for micro, Ω, °C) parse to exactly
//! the unit they were written from: a grid of symbols, prefixes, powers,
//! products and quotients.

use incertus_units::{parse, si_symbols};

const SYMBOLS: [&str; 34] = [
    "m", "mm", "um", "uL", "mL", "L", "kg", "g", "ug", "s", "ms", "us", "K", "mol", "mmol", "A",
    "uA", "V", "mV", "ohm", "kohm", "Pa", "kPa", "bar", "J", "eV", "Hz", "N", "W", "ppm", "%", "D",
    "Da", "min",
];
const POWERS: [&str; 7] = ["", "^2", "^3", "^-1", "^-2", "**2", "^(1/2)"];

fn same(a: &str, b: &str) {
    let (x, y) = (parse(a), parse(b));
    match (&x, &y) {
        (Ok(x), Ok(y)) => {
            assert_eq!(x.dimension, y.dimension, "{a} vs {b}");
            assert!(
                (x.factor - y.factor).abs() <= 1e-15 * x.factor.abs(),
                "{a}: {} vs {b}: {}",
                x.factor,
                y.factor
            );
            assert_eq!(x.offset, y.offset, "{a} vs {b}");
        }
        (Err(_), Err(_)) => {}
        _ => panic!("{a} -> {b}: {x:?} vs {y:?}"),
    }
}

#[test]
fn si_symbols_parse_to_the_same_unit() {
    let mut n = 0;
    for a in SYMBOLS {
        for p in POWERS {
            let one = format!("{a}{p}");
            same(&one, &si_symbols(&one));
            for b in ["m", "kg", "s^-1", "mol", "degC"] {
                for op in ["*", "/", " "] {
                    let t = format!("{one}{op}{b}");
                    same(&t, &si_symbols(&t));
                    n += 1;
                }
            }
        }
    }
    assert!(n > 3000);
    assert_eq!(si_symbols("degC"), "°C");
    assert_eq!(si_symbols("mm^3"), "mm³");
    assert_eq!(si_symbols("m^-1"), "m⁻¹");
    assert_eq!(si_symbols("uL"), "µL");
    assert_eq!(si_symbols("kohm"), "kΩ");
    assert_eq!(si_symbols("J/(kg*K)"), "J/(kg·K)");
    assert_eq!(si_symbols("m^(1/2)"), "m^(1/2)");
    assert_eq!(si_symbols("u"), "u"); // the atomic mass unit keeps its symbol
}
