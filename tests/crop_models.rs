//! Crop models are data: the shipped files load, every constant carries unit, status and source, and every kind
//! of bad file (syntax, unknown field, missing constant, wrong unit, out-of-range or negative value, bad status,
//! inconsistent fractions) is refused with an error naming the file and the dotted field.
#![deny(clippy::float_cmp)]

use std::path::{Path, PathBuf};

use approx::assert_relative_eq;
use dryfront::crop::{Crop, Status, BUILTIN_CROPS};
use dryfront::error::InputError;
use dryfront::props::thin_layer::PodModel;
use serde_json::Value;

fn peanut_json() -> Value {
    let path = dryfront::models::resolve("crops", "peanut-inshell", "--crop").unwrap();
    serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
}

fn load_value(v: &Value) -> Result<Crop, InputError> {
    Crop::from_json_str(
        &serde_json::to_string_pretty(v).unwrap(),
        Path::new("bad/peanut.json"),
    )
}

fn model_error(v: &Value) -> (String, String) {
    match load_value(v) {
        Err(InputError::Model {
            path,
            line,
            field,
            message,
        }) => {
            assert_eq!(path, PathBuf::from("bad/peanut.json"));
            // Every error names a field whose first part is in the (pretty-printed) file, so it has a line.
            assert!(line.is_some_and(|l| l > 1), "{field}: {line:?}");
            (field, message)
        }
        other => panic!("expected a model error, got {other:?}"),
    }
}

#[test]
fn every_builtin_crop_loads_with_provenance_on_every_constant() {
    for name in BUILTIN_CROPS {
        let crop = Crop::load_named(name).unwrap_or_else(|e| panic!("{name}: {e}"));
        assert_eq!(crop.name, name);
        assert!(
            crop.constants.len() >= 15,
            "{name}: {} constants",
            crop.constants.len()
        );
        for (field, c) in &crop.constants {
            assert!(
                !c.source.trim().is_empty() && !c.unit.trim().is_empty(),
                "{name}.{field}"
            );
        }
    }
}

#[test]
fn peanut_is_two_compartment_with_calibrated_rates_and_fractions_summing_to_one() {
    let crop = Crop::load_named("peanut-inshell").unwrap();
    let PodModel::TwoCompartment { hull_fraction, .. } = crop.moisture else {
        panic!("two compartments")
    };
    let kernel_fraction = crop.constants["compartments.kernel.dry_matter_fraction"].value;
    assert_relative_eq!(hull_fraction + kernel_fraction, 1.0, max_relative = 1e-12);
    for field in [
        "compartments.hull.thin_layer.k_ref_per_h",
        "compartments.kernel.thin_layer.k_ref_per_h",
    ] {
        assert_eq!(crop.constants[field].status, Status::Calibrated, "{field}");
    }
    // Documented ranges (DOMAIN.md §3.3): k_h 0.3–1 /h, k_kh 0.03–0.1 /h, Ea 20–40 kJ/mol.
    let k_h = crop.constants["compartments.hull.thin_layer.k_ref_per_h"].value;
    let k_kh = crop.constants["compartments.kernel.thin_layer.k_ref_per_h"].value;
    let ea = crop.constants["compartments.kernel.thin_layer.activation_energy_j_per_mol"].value;
    assert!(
        (0.3..=1.0).contains(&k_h) && (0.03..=0.1).contains(&k_kh) && (20e3..=40e3).contains(&ea)
    );
    // The hull proxy is labelled as such.
    assert!(crop.constants["compartments.hull.isotherm.a"]
        .source
        .contains("PROXY"));
}

#[test]
fn single_compartment_crops_use_one_compartment() {
    for name in ["shelled-corn", "soybeans"] {
        let crop = Crop::load_named(name).unwrap();
        assert!(!crop.is_two_compartment(), "{name}");
        assert!(
            crop.kernel_data_range.is_some(),
            "{name} declares its fitted range"
        );
    }
}

#[test]
fn unknown_field_is_named_with_its_path() {
    let mut v = peanut_json();
    v["compartments"]["kernel"]["isotherm"]["oil"] = Value::from(0.5);
    let (field, message) = model_error(&v);
    assert_eq!(field, "compartments.kernel.isotherm.oil");
    assert!(message.contains("unknown field"), "{message}");

    let mut v = peanut_json();
    v["safety"]["max_plenum_temp_c"]["note"] = Value::from("x");
    let (field, message) = model_error(&v);
    assert_eq!(field, "safety.max_plenum_temp_c");
    assert!(message.contains("unknown field"), "{message}");
}

#[test]
fn missing_constant_is_named_with_its_path() {
    let mut v = peanut_json();
    v["compartments"]["kernel"]["isotherm"]
        .as_object_mut()
        .unwrap()
        .remove("a");
    let (field, message) = model_error(&v);
    assert_eq!(field, "compartments.kernel.isotherm.a");
    assert_eq!(message, "missing field");

    let mut v = peanut_json();
    v["resistance"].as_object_mut().unwrap().remove("shedd_b");
    assert_eq!(model_error(&v).0, "resistance.shedd_b");
}

#[test]
fn negative_or_out_of_range_constants_are_refused() {
    let cases = [
        (
            &["compartments", "hull", "thin_layer", "k_ref_per_h"][..],
            -0.5,
        ),
        (&["resistance", "shedd_a"][..], -3800.0),
        (&["compartments", "kernel", "isotherm", "a"][..], 1.2),
        (&["safety", "max_plenum_temp_c"][..], 400.0),
        (&["thermal", "bulk_density_kg_per_m3"][..], 0.0),
    ];
    for (path, bad) in cases {
        let mut v = peanut_json();
        let mut node = &mut v;
        for key in path {
            node = &mut node[*key];
        }
        node["value"] = Value::from(bad);
        let (field, message) = model_error(&v);
        assert_eq!(field, path.join("."));
        assert!(message.contains("must be between"), "{field}: {message}");
    }
}

#[test]
fn wrong_unit_status_or_form_is_refused() {
    let mut v = peanut_json();
    v["compartments"]["kernel"]["thin_layer"]["activation_energy_j_per_mol"]["unit"] =
        Value::from("kJ/mol");
    let (field, message) = model_error(&v);
    assert_eq!(
        field,
        "compartments.kernel.thin_layer.activation_energy_j_per_mol"
    );
    assert!(message.contains("unit must be \"J/mol\""), "{message}");

    let mut v = peanut_json();
    v["resistance"]["packing_factor"]["status"] = Value::from("guessed");
    assert_eq!(model_error(&v).0, "resistance.packing_factor");

    let mut v = peanut_json();
    v["compartments"]["kernel"]["isotherm"]["form"] = Value::from("modified-smith");
    assert_eq!(model_error(&v).0, "compartments.kernel.isotherm.form");

    let mut v = peanut_json();
    v["compartments"]["kernel"]["isotherm"]["moisture_unit"] = Value::from("decimal-db");
    assert_eq!(
        model_error(&v).0,
        "compartments.kernel.isotherm.moisture_unit"
    );
}

#[test]
fn inconsistent_compartments_are_refused() {
    let mut v = peanut_json();
    v["compartments"]["hull"]["dry_matter_fraction"]["value"] = Value::from(0.4);
    assert_eq!(model_error(&v).0, "compartments.kernel.dry_matter_fraction");

    let mut v = peanut_json();
    let tl = &mut v["compartments"]["kernel"]["thin_layer"];
    tl["form"] = Value::from("page");
    tl["n"] =
        serde_json::json!({"value": 0.8, "unit": "-", "status": "from-memory", "source": "test"});
    tl["k_ref_per_h"]["unit"] = Value::from("1/h^n");
    let (field, message) = model_error(&v);
    assert_eq!(field, "compartments.kernel.thin_layer.form");
    assert!(message.contains("first-order"), "{message}");
}

#[test]
fn syntax_errors_give_the_line() {
    let err =
        Crop::from_json_str("{\n  \"name\": \"x\",\n  oops\n}", Path::new("bad.json")).unwrap_err();
    match err {
        InputError::Parse { line, .. } => assert_eq!(line, Some(3)),
        other => panic!("expected a parse error, got {other:?}"),
    }
    // A number too large for f64 is refused, not read as infinity.
    let text = serde_json::to_string(&peanut_json())
        .unwrap()
        .replace("\"value\":330.0", "\"value\":1e999");
    assert!(text.contains("1e999"));
    assert!(Crop::from_json_str(&text, Path::new("bad.json")).is_err());
}

#[test]
fn names_resolve_to_files_and_unknown_names_are_refused() {
    let p = dryfront::models::resolve("crops", "soybeans", "--crop").unwrap();
    assert!(p.ends_with("models/crops/soybeans.json"));
    assert_eq!(
        dryfront::models::resolve("crops", "some/dir/my.json", "--crop").unwrap(),
        PathBuf::from("some/dir/my.json")
    );
    match dryfront::models::resolve("crops", "sunflower", "--crop") {
        Err(InputError::Argument { name, expected, .. }) => {
            assert_eq!(name, "--crop");
            assert!(expected.contains("peanut-inshell"));
        }
        other => panic!("expected an argument error, got {other:?}"),
    }
}

#[test]
fn peanut_dry_matter_per_bed_volume_matches_domain_example() {
    // DOMAIN.md §4 (common practice, no source): 330 kg/m³ at 18 % w.b. → 270 kg dry matter per m³.
    let crop = Crop::load_named("peanut-inshell").unwrap();
    assert_relative_eq!(
        crop.dry_matter_density_kg_per_m3(18.0),
        270.6,
        max_relative = 1e-9
    );
    // The slope in the file was computed for constant dry matter per volume, so it stays within 1 % at 10–25 %.
    for m in [10.0, 25.0] {
        assert_relative_eq!(
            crop.dry_matter_density_kg_per_m3(m),
            270.6,
            max_relative = 0.01
        );
    }
    let cp = crop.cp_dry_pod_j_per_kg_k();
    assert!(cp > crop.thermal.cp_dry_hull_j_per_kg_k && cp < crop.thermal.cp_dry_kernel_j_per_kg_k);
}
