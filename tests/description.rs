//! The typed model description: every way of making a model goes through
//! it, and writing a model file is serialising it.
//!
//! - every model file of the repository reads into a description whose
//!   model file reads back into the same description and the same numbers;
//! - a property test over generated descriptions (every evaluation of an
//!   input, every limit shape, dof statements, correlations, groups, inline
//!   fits, specifications) round-trips through the model file and JSON;
//! - names the formula language allows (`α`, `ρ_w`) work in the builder, and
//!   a bad number or name from the builder is an error naming the key path.

use incertus::gum::builder::ModelBuilder;
use incertus::gum::conformity::{Guard, Process, Rule, Specification};
use incertus::gum::description::*;
use incertus::gum::{load_file, load_str, propagate, Options};
use proptest::prelude::*;

fn model_files() -> Vec<std::path::PathBuf> {
    let mut out = Vec::new();
    for dir in ["tests/models", "examples/models"] {
        for e in std::fs::read_dir(dir).unwrap() {
            let p = e.unwrap().path();
            if p.extension().is_some_and(|x| x == "toml") {
                out.push(p);
            }
        }
    }
    out.sort();
    out
}

#[test]
fn every_model_file_round_trips_through_its_description() {
    let files = model_files();
    assert!(files.len() >= 8, "{files:?}");
    for p in files {
        let text = std::fs::read_to_string(&p).unwrap();
        let file = p.display().to_string();
        let d = ModelDescription::from_toml(&text, &file).unwrap();
        let written = d.to_toml();
        let again = ModelDescription::from_toml(&written, &file)
            .unwrap_or_else(|e| panic!("{file}: {e}\n{written}"));
        assert_eq!(d, again, "{file}\n{written}");
        // The same numbers from the file and from the written description
        // (data files are relative to the model's folder: write it there).
        let Ok(model) = load_file(&p) else {
            continue; // a demonstration of an error (dimension_slip)
        };
        let copy = p.with_file_name(format!(
            ".roundtrip-{}",
            p.file_name().unwrap().to_str().unwrap()
        ));
        std::fs::write(&copy, &written).unwrap();
        let back = load_file(&copy);
        std::fs::remove_file(&copy).unwrap();
        let back = back.unwrap();
        let (a, b) = (
            propagate(&model, &Options::default()).unwrap(),
            propagate(&back, &Options::default()).unwrap(),
        );
        for (x, y) in a.results.iter().zip(&b.results) {
            assert_eq!(x.value.to_bits(), y.value.to_bits(), "{file}");
            assert_eq!(
                x.standard_uncertainty.to_bits(),
                y.standard_uncertainty.to_bits(),
                "{file}"
            );
        }
    }
}

#[test]
fn the_builder_takes_every_name_the_formula_language_takes() {
    let m = ModelBuilder::new()
        .input("α", |i| {
            i.value(1.2e-5).standard_uncertainty(1e-6).unit("1/K")
        })
        .input("ρ_w", |i| {
            i.value(998.2).standard_uncertainty(0.05).unit("kg/m^3")
        })
        .input("T_2", |i| i.value(20.0).rectangular(0.5).unit("K"))
        .measurand("V", "ρ_w*(1 + α*T_2)", None)
        .build()
        .unwrap();
    assert_eq!(m.inputs.len(), 3);
    let text = ModelBuilder::new()
        .input("ρ_w", |i| i.value(998.2).standard_uncertainty(0.05))
        .measurand("y", "2*ρ_w", None)
        .to_toml();
    let back = load_str(&text, "built.toml").unwrap();
    assert_eq!(back.inputs[0].name, "ρ_w");
}

#[test]
fn bad_numbers_and_names_from_the_builder_name_their_key_path() {
    let cases: Vec<(ModelBuilder, &str)> = vec![
        (
            ModelBuilder::new()
                .input("x", |i| i.value(1.0).standard_uncertainty(f64::NAN))
                .measurand("y", "x", None),
            "`inputs.x.standard_uncertainty`: `NaN` is not a finite number",
        ),
        (
            ModelBuilder::new()
                .input("x", |i| i.value(f64::INFINITY).standard_uncertainty(0.1))
                .measurand("y", "x", None),
            "`inputs.x.value`: `inf` is not a finite number",
        ),
        (
            ModelBuilder::new()
                .input("x", |i| i.value(1.0).standard_uncertainty(-0.1))
                .measurand("y", "x", None),
            "`inputs.x.standard_uncertainty`: must be zero or positive, found -0.1",
        ),
        (
            ModelBuilder::new()
                .input("a.b", |i| i.value(1.0))
                .measurand("y", "2", None),
            "`inputs.a.b`: `a.b` cannot be used as a name in formulas",
        ),
        (
            ModelBuilder::new()
                .input("x", |i| i.value(1.0))
                .input("x", |i| i.value(2.0))
                .measurand("y", "x", None),
            "`inputs.x`: `x` is defined twice",
        ),
        (
            ModelBuilder::new()
                .input("x", |i| i.value(1.0).standard_uncertainty(0.1))
                .correlation("x", "z", 0.5)
                .measurand("y", "x", None),
            "`correlations[0].inputs`: `z` is not an input",
        ),
        (
            ModelBuilder::new().input("x", |i| i.value(1.0)),
            "the model has no measurands",
        ),
        (
            ModelBuilder::new()
                .input("x", |i| i.value(1.0))
                .measurand("y", "x +", None),
            "`measurands[0].formula`: expected a number, a name or '('",
        ),
    ];
    for (b, expect) in cases {
        let e = b.build().unwrap_err().to_string();
        assert!(e.contains(expect), "{e}\nexpected {expect}");
        assert!(e.starts_with("<built model>: `"), "{e}");
        assert!(!e.contains("TOML"), "{e}");
    }
}

#[test]
fn a_draft_needs_no_measurand() {
    let d = ModelDescription {
        inputs: vec![InputDescription::standard("x", 1.0, 0.1)],
        ..ModelDescription::default()
    };
    let m = d.validate_draft().unwrap();
    assert!(m.measurands.is_empty());
    assert!(propagate(&m, &Options::default())
        .unwrap()
        .results
        .is_empty());
    assert!(d.validate().is_err());
}

// --- generated descriptions -------------------------------------------

fn finite() -> impl Strategy<Value = f64> {
    prop_oneof![
        -1e6..1e6f64,
        (1e-30..1e30f64),
        Just(0.0),
        Just(1.0),
        Just(-2.5e-12),
    ]
}

fn positive() -> impl Strategy<Value = f64> {
    prop_oneof![1e-9..1e6f64, Just(1.0), Just(3e-20)]
}

fn dof() -> impl Strategy<Value = Option<DofGiven>> {
    prop_oneof![
        Just(None),
        positive().prop_map(|d| Some(DofGiven::Dof(d))),
        (0.01..0.5f64).prop_map(|r| Some(DofGiven::RelativeReliability(r))),
    ]
}

fn evaluation() -> impl Strategy<Value = InputEvaluation> {
    let shape = prop_oneof![
        Just(LimitShape::Rectangular),
        Just(LimitShape::Triangular),
        Just(LimitShape::Arcsine),
        (0.0..=1.0f64).prop_map(|beta| LimitShape::Trapezoidal { beta }),
        (0.0..1.0f64).prop_map(|d| LimitShape::CurvilinearTrapezoidal {
            limit_half_width: d
        }),
    ];
    let limits = prop_oneof![
        (finite(), positive())
            .prop_map(|(value, half_width)| LimitsGiven::HalfWidth { value, half_width }),
        (-1e6..1e6f64, 1e-3..1e3f64, any::<bool>()).prop_map(|(lower, w, v)| LimitsGiven::Bounds {
            lower,
            upper: lower + w,
            value: v.then_some(lower + w / 2.0)
        }),
    ];
    prop_oneof![
        finite().prop_map(|value| InputEvaluation::Exact { value }),
        (finite(), positive(), dof(), any::<bool>()).prop_map(|(value, u, dof, t)| {
            InputEvaluation::Standard {
                value,
                standard_uncertainty: u,
                shape: if t && dof.is_some() {
                    CentredShape::StudentT
                } else {
                    CentredShape::Normal
                },
                dof,
            }
        }),
        (finite(), positive(), 1.0..3.0f64, dof()).prop_map(|(value, big_u, k, dof)| {
            InputEvaluation::Expanded {
                value,
                expanded_uncertainty: big_u,
                coverage_factor: k,
                dof,
                shape: CentredShape::Normal,
            }
        }),
        (limits, shape, dof()).prop_map(|(limits, shape, dof)| InputEvaluation::Limits {
            limits,
            shape,
            dof
        }),
        (prop::collection::vec(finite(), 2..8), any::<bool>()).prop_map(|(values, pooled)| {
            InputEvaluation::Observations {
                values,
                pooled: pooled.then_some(Pooled {
                    standard_deviation: 0.5,
                    dof: 12.0,
                }),
            }
        }),
        (positive(), positive(), dof()).prop_map(|(shape, scale, dof)| InputEvaluation::Gamma {
            shape,
            scale,
            dof
        }),
        (positive(), dof()).prop_map(|(value, dof)| InputEvaluation::Exponential { value, dof }),
        prop_oneof![Just("c"), Just("h"), Just("k_B"), Just("G")]
            .prop_map(|n| InputEvaluation::Constant { name: n.into() }),
        prop_oneof![Just("intercept"), Just("slope")].prop_map(|p| {
            InputEvaluation::FitParameter {
                fit: "line".into(),
                parameter: p.into(),
            }
        }),
    ]
}

fn specification() -> impl Strategy<Value = Option<Specification>> {
    prop_oneof![
        Just(None),
        (-1e6..1e6f64, 1e-3..1e3f64, 0usize..3, any::<bool>()).prop_map(|(l, w, r, p)| {
            let (rule, guard) = match r {
                0 => (Rule::SimpleAcceptance, Guard::None),
                1 => (Rule::GuardedAcceptance, Guard::MultipleOfU(1.0)),
                _ => (Rule::GuardedRejection, Guard::SpecificRisk(0.05)),
            };
            Some(Specification {
                lower: Some(l),
                upper: Some(l + w),
                rule,
                guard,
                process: p.then_some(Process {
                    mean: l + w / 2.0,
                    standard_deviation: w,
                }),
            })
        }),
    ]
}

fn description() -> impl Strategy<Value = ModelDescription> {
    let names = ["x", "α", "ρ_w", "T_2", "big_name_7"];
    (
        prop::collection::vec(evaluation(), 1..5),
        prop::option::of(0.5..0.999f64),
        any::<bool>(),
        specification(),
        prop::option::of("[ -~]{0,20}"),
        any::<bool>(),
    )
        .prop_map(move |(evals, p, exact, spec, title, unit)| {
            let mut d = ModelDescription {
                title,
                settings: Settings {
                    coverage_probability: p,
                    effective_dof_rounding: exact.then_some(incertus::gum::DofRounding::Exact),
                },
                ..ModelDescription::default()
            };
            d.fits.push(FitDescription {
                name: "line".into(),
                description: Some(
                    "a \"quoted\" line\nwith two lines, x = 0.000000000000000001 and 'y = 2'"
                        .into(),
                ),
                data: FitData::Inline {
                    x: vec![1.0, 2.0, 3.0, 4.0],
                    y: vec![2.1, 3.9, 6.2, 7.8],
                    y_uncertainty: None,
                    x_uncertainty: None,
                },
                degree: 1,
                exclude: vec![],
                exclude_reason: None,
                scale_by_chi_squared: false,
                x_unit: None,
                y_unit: None,
            });
            for (k, e) in evals.into_iter().enumerate() {
                let mut i = InputDescription::new(names[k], e);
                if unit {
                    i.unit = Some("mm".into());
                    i.source = Some(format!("certificate \"C-{k}\" of 2026-03-01,\nclause 4"));
                }
                d.inputs.push(i);
            }
            if d.inputs.len() > 1 {
                d.correlations.push(CorrelationDescription {
                    inputs: [d.inputs[0].name.clone(), d.inputs[1].name.clone()],
                    coefficient: 0.25,
                });
            }
            let sum: Vec<String> = d.inputs.iter().map(|i| i.name.clone()).collect();
            let mut m = MeasurandDescription::new("y", &sum.join(" + "));
            m.specification = spec;
            m.expected_value = Some(1.5);
            d.measurands.push(m);
            d
        })
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 400, rng_seed: proptest::test_runner::RngSeed::Fixed(16), ..ProptestConfig::default() })]

    /// Saving is serialising: the model file of any description reads back
    /// into that description, through the loader and through serde (TOML
    /// and JSON).
    #[test]
    fn any_description_round_trips(d in description()) {
        let text = d.to_toml();
        let back = ModelDescription::from_toml(&text, "generated.toml")
            .map_err(|e| TestCaseError::fail(format!("{e}\n{text}")))?;
        prop_assert_eq!(&back, &d, "{}", text);
        let via_serde: ModelDescription = toml::from_str(&text)
            .map_err(|e| TestCaseError::fail(format!("{e}\n{text}")))?;
        prop_assert_eq!(&via_serde, &d);
        let json = serde_json::to_string(&d).unwrap();
        let from_json: ModelDescription = serde_json::from_str(&json).unwrap();
        prop_assert_eq!(&from_json, &d);
        // Validation gives the same verdict and numbers both ways.
        match (d.validate(), load_str(&text, "generated.toml")) {
            (Ok(a), Ok(b)) => {
                for (x, y) in a.inputs.iter().zip(&b.inputs) {
                    prop_assert_eq!(x.estimate.to_bits(), y.estimate.to_bits());
                    prop_assert_eq!(x.standard_uncertainty.to_bits(), y.standard_uncertainty.to_bits());
                }
            }
            // The same problem at the same key (a file quotes numbers as written).
            (Err(a), Err(b)) => prop_assert_eq!(a.path, b.path),
            (a, b) => prop_assert!(false, "{:?} vs {:?}\n{}", a.err(), b.err(), text),
        }
    }
}

/// Every model error carries its kind, from text and from the builder.
#[test]
fn model_errors_carry_their_kind() {
    use incertus::gum::ModelErrorKind as K;
    let text = |t: &str| load_str(t, "k.toml").unwrap_err().kind;
    let y = "\n[[measurands]]\nname = \"y\"\nformula = \"x\"\n";
    assert_eq!(text("[inputs.x\nvalue = 1"), K::Syntax);
    assert_eq!(text(&format!("[inputs.x]\nvalu = 1.0{y}")), K::Key);
    assert_eq!(text(&format!("[inputs.x]\nvalue = \"a\"{y}")), K::Key);
    assert_eq!(
        text(&format!(
            "[inputs.x]\nvalue = 1.0\nstandard_uncertainty = -1.0{y}"
        )),
        K::Value
    );
    assert_eq!(
        text(&format!("[inputs.x]\nvalue = 1.0\nunit = \"kgg\"{y}")),
        K::Unit
    );
    assert_eq!(text(&format!("[inputs.x]\nconstant = \"c0\"{y}")), K::Name);
    assert_eq!(
        text("[inputs.x]\nvalue = 1.0\n[[measurands]]\nname = \"y\"\nformula = \"x +\"\n"),
        K::Formula
    );
    assert_eq!(
        text("[inputs.x]\nvalue = 1.0\n[[measurands]]\nname = \"y\"\nformula = \"z\"\n"),
        K::Formula
    );
    let built = |b: ModelBuilder| b.build().unwrap_err().kind;
    assert_eq!(
        built(
            ModelBuilder::new()
                .input("a.b", |i| i.value(1.0))
                .measurand("y", "2", None)
        ),
        K::Name
    );
    assert_eq!(
        built(
            ModelBuilder::new()
                .input("x", |i| i.value(f64::NAN))
                .measurand("y", "x", None)
        ),
        K::Value
    );
}

/// An input built without its value is named as such, not as a NaN.
#[test]
fn a_builder_input_without_a_value_says_so() {
    let e = ModelBuilder::new()
        .input("x", |i| i.standard_uncertainty(0.1))
        .measurand("y", "x", None)
        .build()
        .unwrap_err();
    assert_eq!(e.path, "inputs.x.value");
    assert!(e.message.contains("`x` needs a value"), "{e}");
    // Observations and constants carry their own value.
    assert!(ModelBuilder::new()
        .input("o", |i| i.observations(&[1.0, 1.1, 0.9]))
        .input("c", |i| i.constant("c"))
        .measurand("y", "o*c", None)
        .build()
        .is_ok());
}
