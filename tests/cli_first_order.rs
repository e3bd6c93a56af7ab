//! The program names the options that carry out a remedy the library
//! names: a point without a derivative points to `--mc`, a first-order u
//! of 0 to `--second-order` and `--mc` (the library's own texts name no
//! command-line options; crates/gum/tests/first_order_limits.rs).

mod common;
use common::{incertus, scratch, write};

#[test]
fn warnings_in_the_program_name_its_options() {
    let dir = scratch("first_order_options");
    let kink = write(
        &dir,
        "kink.toml",
        "[inputs.a]\nvalue = 1.0\nstandard_uncertainty = 0.1\n\
         [inputs.b]\nvalue = 1.0\nstandard_uncertainty = 0.1\n\
         [[measurands]]\nname = \"d\"\nformula = \"abs(a - b)\"\n",
    );
    let (code, out, err) = incertus(&["eval", kink.to_str().unwrap()]);
    assert_eq!(code, 0, "{err}");
    assert!(
        out.contains("propagation of distributions (--mc, JCGM 101:2008)"),
        "{out}"
    );
    let flat = write(
        &dir,
        "flat.toml",
        "[inputs.a]\nvalue = 0.0\nstandard_uncertainty = 0.1\n\
         [inputs.b]\nvalue = 0.0\nstandard_uncertainty = 0.1\n\
         [[measurands]]\nname = \"p\"\nformula = \"a*b\"\n",
    );
    let (code, out, err) = incertus(&["eval", flat.to_str().unwrap()]);
    assert_eq!(code, 0, "{err}");
    assert!(
        out.contains(
            "higher-order terms (--second-order) or use propagation of distributions (--mc)"
        ),
        "{out}"
    );
    let (_, json, _) = incertus(&["eval", flat.to_str().unwrap(), "--format", "json"]);
    assert!(json.contains("--second-order"), "{json}");
}
