//! An input typed in a unit other than the coherent SI one is converted to
//! SI and back for the report; the value shown (JSON, CSV, budget) is the
//! value typed, not the conversion's binary noise (`20.075`, not
//! `20.074999999999989`). A grid of values and units.

mod common;
use common::{incertus, scratch, write};

#[test]
fn typed_values_come_back_as_typed() {
    let dir = scratch("no_noise");
    let values = [
        20.075, 0.1, 123.456, -40.0, 1e-3, 99.9999, 0.7, 37.2, 1234.5678, 3.3e-7,
    ];
    let units = ["degC", "mm", "uL", "kPa", "g/cm^3", "min", "mg/L"];
    for (k, unit) in units.iter().enumerate() {
        let mut text = String::new();
        for (i, v) in values.iter().enumerate() {
            text.push_str(&format!(
                "[inputs.x{i}]\nvalue = {v:?}\nstandard_uncertainty = 0.01\nunit = \"{unit}\"\n"
            ));
        }
        // Alternating signs: for °C a difference of points (weights sum to
        // 0), which the classification of offset scales accepts.
        let sum: String = (0..values.len())
            .map(|i| format!("{}x{i}", if i % 2 == 0 { " + " } else { " - " }))
            .collect();
        let unit_out = if *unit == "degC" { "K" } else { unit };
        text.push_str(&format!(
            "[[measurands]]\nname = \"y\"\nformula = \"{}\"\nunit = \"{unit_out}\"\n",
            sum.trim_start_matches(" + ")
        ));
        let f = write(&dir, &format!("m{k}.toml"), &text);
        let (code, out, err) = incertus(&["eval", f.to_str().unwrap(), "--format", "json"]);
        assert_eq!(code, 0, "{unit}: {err}");
        let v: serde_json::Value = serde_json::from_str(&out).unwrap();
        for (i, b) in v["results"][0]["budget"]
            .as_array()
            .unwrap()
            .iter()
            .enumerate()
        {
            assert_eq!(b["value"].as_f64().unwrap(), values[i], "{unit} x{i}");
            assert_eq!(
                b["standard_uncertainty"].as_f64().unwrap(),
                0.01,
                "{unit} x{i}"
            );
        }
        // budget.csv as another program reads it: the value as typed, in
        // its shortest form (`20.075`, `0.001`, `3.3e-7`).
        let (code, csv, err) = incertus(&["eval", f.to_str().unwrap(), "--format", "budget-csv"]);
        assert_eq!(code, 0, "{unit}: {err}");
        let rows: Vec<Vec<&str>> = csv
            .lines()
            .map(|l| l.split(',').collect())
            .filter(|c: &Vec<&str>| c[1] == "input")
            .collect();
        for (i, row) in rows.iter().enumerate() {
            let want = if values[i].abs() >= 1e-4 {
                format!("{}", values[i])
            } else {
                format!("{:e}", values[i])
            };
            assert_eq!(row[3], want, "{unit} x{i}: {}", row.join(","));
            assert_eq!(row[4], "0.01", "{unit} x{i}");
        }
    }
}
