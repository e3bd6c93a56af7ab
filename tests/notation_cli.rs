//! The result lines of `incertus eval` read back as a person reads them, in
//! text and Markdown, over a grid of magnitudes and every `--digits`
//! (JCGM 100:2008, 7.2.2 and 7.2.6; SI Brochure, 9th ed., 5.4): the digits
//! in parentheses are u in units of the last digit shown, ± is U with k,
//! and both must agree with the full-precision JSON of the same run.

mod common;
use common::{incertus, scratch, write};

fn superscript(t: &str) -> i32 {
    let s: String = t
        .chars()
        .map(|c| match c {
            '⁻' => '-',
            '⁰' => '0',
            '¹' => '1',
            '²' => '2',
            '³' => '3',
            '⁴' => '4',
            '⁵' => '5',
            '⁶' => '6',
            '⁷' => '7',
            '⁸' => '8',
            '⁹' => '9',
            _ => panic!("not a superscript: {t:?}"),
        })
        .collect();
    s.parse().unwrap()
}

/// A printed number (digits, optional point, optional sign) times 10^power.
fn number(t: &str, power: i32) -> (f64, i32) {
    let decimals = t.find('.').map_or(0, |i| (t.len() - i - 1) as i32);
    let digits = t.replace('.', "");
    (
        format!("{digits}e{}", power - decimals).parse().unwrap(),
        power - decimals,
    )
}

/// (y, u) from `y = 1.234(56) × 10⁻³ unit`, (y, U) from the ± line.
fn read_result(line: &str, name: &str) -> (f64, f64, i32) {
    let rest = line.split_once(&format!("{name} = ")).unwrap().1;
    let rest = rest.split("   (").next().unwrap().trim();
    let (body, power) = match rest.split_once(" × 10") {
        Some((b, p)) => (b, superscript(p.split(' ').next().unwrap())),
        // (these models have no unit, so nothing follows the number)
        None => (rest, 0),
    };
    if let Some((v, u)) = body.split_once(" ± ") {
        let v = v.trim_start_matches('(');
        let u = u.trim_end_matches(')');
        let (y, place) = number(v, power);
        let (big_u, place_u) = number(u, power);
        assert_eq!(place, place_u, "{line}");
        (y, big_u, place)
    } else {
        let (v, d) = body.split_once('(').unwrap();
        let d = d.trim_end_matches(')');
        let (y, place) = number(v, power);
        let u: f64 = format!("{d}e{place}").parse().unwrap();
        (y, u, place)
    }
}

fn round_sig(x: f64, digits: usize) -> f64 {
    format!("{:.*e}", digits - 1, x).parse().unwrap()
}

#[test]
fn result_lines_read_back_agree_with_the_json() {
    let dir = scratch("notation_cli");
    let mut n = 0;
    for (i, (y, u)) in [
        (500.0, 120.0),
        (999.0, 99.9),
        (-0.004_567, 0.000_12),
        (2_830_628.8, 1_372.6),
        (1.618_03e-30, 3.4e-33),
        (0.0, 0.25),
        (12.345_678, 0.000_999_6),
        (6.02e23, 4.1e21),
        (1.7, 3e-6),
        (-73_000.0, 26_000.0),
    ]
    .into_iter()
    .enumerate()
    {
        let p = write(
            &dir,
            &format!("m{i}.toml"),
            &format!(
                "[inputs.x]\nvalue = {y:e}\nstandard_uncertainty = {u:e}\n[[measurands]]\nname = \"y\"\nformula = \"x\"\n"
            ),
        );
        let f = p.to_str().unwrap();
        let (_, json, _) = incertus(&["eval", f, "--format", "json"]);
        let v: serde_json::Value = serde_json::from_str(&json).unwrap();
        let r = &v["results"][0];
        let (jy, ju, jbig) = (
            r["value"].as_f64().unwrap(),
            r["standard_uncertainty"].as_f64().unwrap(),
            r["expanded_uncertainty"].as_f64().unwrap(),
        );
        for digits in 1..=3usize {
            let d = digits.to_string();
            for format in ["text", "markdown"] {
                let (code, out, err) = incertus(&["eval", f, "--digits", &d, "--format", format]);
                assert_eq!(code, 0, "{err}");
                let concise = out
                    .lines()
                    .find(|l| l.starts_with("result   y = "))
                    .unwrap();
                let pm = out
                    .lines()
                    .skip_while(|l| !l.starts_with("result   y = "))
                    .nth(1)
                    .unwrap();
                for (line, want) in [(concise, ju), (pm, jbig)] {
                    let (ry, ru, place) = read_result(line, "y");
                    let unit = 10f64.powi(place);
                    // A decimal tie (0.25 to one digit) may go either way.
                    let near = [0.0, 1e-14, -1e-14]
                        .iter()
                        .any(|e| (ru - round_sig(want * (1.0 + e), digits)).abs() <= 1e-9 * want);
                    assert!(
                        near,
                        "{format} {digits}: {line}: read {ru:e}, expected {:e}",
                        round_sig(want, digits)
                    );
                    assert!(
                        (ry - jy).abs() <= 0.5 * unit * (1.0 + 1e-9),
                        "{format} {digits}: {line}: read {ry:e} from {jy:e}"
                    );
                    n += 1;
                }
            }
        }
    }
    assert_eq!(n, 10 * 3 * 2 * 2);
}

/// No human-readable number is written with an `e` exponent: budgets,
/// estimates, u, U, shares — text and Markdown — use × 10ⁿ as the SI
/// Brochure does (9th ed., 5.4.4); formulas as written and CSV/JSON keep
/// their own forms. Over a grid of magnitudes from 10⁻³⁰ to 10³⁰.
#[test]
fn no_human_readable_number_has_an_e_exponent() {
    let dir = scratch("no_e");
    let e_number = |l: &str| {
        let b = l.as_bytes();
        (1..b.len().saturating_sub(1)).any(|i| {
            (b[i] == b'e' || b[i] == b'E')
                && b[i - 1].is_ascii_digit()
                && (b[i + 1].is_ascii_digit() || b[i + 1] == b'-' || b[i + 1] == b'+')
        })
    };
    for exp in (-30..=30).step_by(6) {
        let x = format!("1.2345e{exp}");
        let u = format!("3.1e{}", exp - 4);
        let model = write(
            &dir,
            &format!("m{exp}.toml"),
            &format!(
                "title = \"grid\"\n[inputs.x]\nvalue = {x}\nstandard_uncertainty = {u}\n\
                 [inputs.y]\nvalue = 2.5\nstandard_uncertainty = 0.01\n\
                 [[measurands]]\nname = \"p\"\nformula = \"x*y\"\n\
                 [measurands.specification]\nlower = 0.0\nupper = 1e{}\n\
                 [[measurands]]\nname = \"q\"\nformula = \"x/y\"\n",
                exp + 1
            ),
        );
        for format in ["text", "markdown"] {
            let (code, out, err) = incertus(&["eval", model.to_str().unwrap(), "--format", format]);
            assert_eq!(code, 0, "{err}");
            for l in out.lines() {
                if l.contains("measurement model") || l.contains('∂') {
                    continue; // formulas as written
                }
                assert!(!e_number(l), "{format}, x = {x}: {l}");
            }
        }
    }
}
