//! The `dataset_description.json` of a run checked against the BIDS v1.11.1 rules for a
//! derivative dataset, as the BIDS schema states them (tests/data/bids_dataset_description_rules.json,
//! written by tests/data/generators/bids_dataset_description.py from bidsschematools 1.2.7, which
//! ships the schema of BIDS v1.11.1): required fields present, every field known to the schema,
//! every value of the schema's type, enum and item rules, GeneratedBy entries with only the keys
//! the schema defines.

mod util;

use std::path::Path;
use std::process::Command;

use serde_json::Value;
use util::cli::matrix_cohort;

fn rules() -> Value {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/bids_dataset_description_rules.json");
    serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
}

/// The problems of `value` under a subset of JSON Schema (type, enum, minItems, items,
/// required, properties as the allowed keys): enough for the dataset_description fields.
fn schema_problems(at: &str, value: &Value, schema: &Value, problems: &mut Vec<String>) {
    if let Some(kind) = schema["type"].as_str() {
        let ok = match kind {
            "string" => value.is_string(),
            "array" => value.is_array(),
            "object" => value.is_object(),
            "number" => value.is_number(),
            "integer" => value.is_i64() || value.is_u64(),
            "boolean" => value.is_boolean(),
            other => panic!("type {other} not handled by this check"),
        };
        if !ok {
            problems.push(format!("{at}: not a {kind}: {value}"));
            return;
        }
    }
    if let Some(allowed) = schema["enum"].as_array() {
        if !allowed.contains(value) {
            problems.push(format!("{at}: {value} not one of {allowed:?}"));
        }
    }
    if let (Some(items), Some(array)) = (schema.get("items"), value.as_array()) {
        if let Some(min) = schema["minItems"].as_u64() {
            if (array.len() as u64) < min {
                problems.push(format!("{at}: {} item(s), at least {min} required", array.len()));
            }
        }
        for (index, item) in array.iter().enumerate() {
            schema_problems(&format!("{at}[{index}]"), item, items, problems);
        }
    }
    if let Some(object) = value.as_object() {
        for required in schema["required"].as_array().into_iter().flatten() {
            if !object.contains_key(required.as_str().unwrap()) {
                problems.push(format!("{at}: required key {required} missing"));
            }
        }
        if let Some(properties) = schema["properties"].as_object() {
            for (key, item) in object {
                // A property's JSON key is its `name` where the schema gives one.
                let definition = properties
                    .iter()
                    .find(|(id, definition)| definition["name"].as_str().unwrap_or(id) == key.as_str());
                match definition {
                    Some((_, definition)) => {
                        schema_problems(&format!("{at}.{key}"), item, definition, problems)
                    }
                    None => problems.push(format!("{at}: key {key} is not defined by the schema")),
                }
            }
        }
    }
}

/// Every problem of a dataset_description.json under the rules for a derivative dataset.
fn description_problems(description: &Value, rules: &Value) -> Vec<String> {
    let mut problems = Vec::new();
    let fields = rules["fields"].as_object().unwrap();
    let object = description.as_object().expect("an object");
    if description["DatasetType"] != "derivative" {
        problems.push(format!("DatasetType is {}, not \"derivative\"", description["DatasetType"]));
    }
    for (name, field) in fields {
        if field["level_if_derivative"] == "required" && !object.contains_key(name) {
            problems.push(format!("required field {name} missing"));
        }
    }
    for (key, value) in object {
        match fields.get(key) {
            Some(field) => schema_problems(key, value, &field["schema"], &mut problems),
            None => problems.push(format!("field {key} is not a dataset_description field")),
        }
    }
    problems
}

#[test]
fn the_rules_are_those_of_bids_1_11_1() {
    let rules = rules();
    assert_eq!(rules["bids_version"], "1.11.1");
    assert_eq!(rules["bids_version"], strata::pipeline::BIDS_VERSION);
    // The schema's own statement of the derivative rules (BIDS v1.11.1, "Derived dataset and
    // pipeline description"): Name and BIDSVersion required, GeneratedBy required for derivatives.
    let fields = &rules["fields"];
    assert_eq!(fields["Name"]["level"], "required");
    assert_eq!(fields["BIDSVersion"]["level"], "required");
    assert_eq!(fields["GeneratedBy"]["level_if_derivative"], "required");
    let keys: Vec<&String> =
        fields["GeneratedBy"]["schema"]["items"]["properties"].as_object().unwrap().keys().collect();
    assert_eq!(keys, ["CodeURL", "Container", "Description", "Name", "Version"]);
}

#[test]
fn a_run_writes_a_valid_derivative_description() {
    let dir = tempfile::tempdir().unwrap();
    matrix_cohort(dir.path(), 10);
    let output = Command::new(env!("CARGO_BIN_EXE_strata"))
        .args([
            "--quiet",
            "run",
            "--inputs",
            "sub-*_conn.npy",
            "--participants",
            "participants.tsv",
            "--group-column",
            "diagnosis",
            "--contrast",
            "insomnia,control",
            "--min-community-size",
            "2",
            "--random-graphs",
            "0",
            "--out",
            "results dir",
        ])
        .current_dir(dir.path())
        .output()
        .unwrap();
    assert_eq!(output.status.code(), Some(0), "{}", String::from_utf8_lossy(&output.stderr));
    let text = std::fs::read_to_string(dir.path().join("results dir/dataset_description.json")).unwrap();
    let description: Value = serde_json::from_str(&text).unwrap();
    let problems = description_problems(&description, &rules());
    assert!(problems.is_empty(), "BIDS v1.11.1 problems: {problems:?}\n{text}");
    let generated = &description["GeneratedBy"][0];
    assert_eq!(generated["Name"], "strata");
    assert_eq!(generated["Version"], env!("CARGO_PKG_VERSION"));
    let recorded = generated["Description"].as_str().unwrap();
    assert!(
        recorded.ends_with(
            " --quiet run --inputs 'sub-*_conn.npy' --participants participants.tsv --group-column diagnosis \
             --contrast insomnia,control --min-community-size 2 --random-graphs 0 --out 'results dir'"
        ),
        "the command line, quoted as a shell needs it: {recorded}"
    );
}

#[test]
fn the_check_finds_each_kind_of_problem() {
    let rules = rules();
    let cases = [
        (
            r#"{"Name": "x", "BIDSVersion": "1.11.1", "DatasetType": "derivative"}"#,
            "required field GeneratedBy missing",
        ),
        (
            r#"{"Name": "x", "BIDSVersion": "1.11.1", "DatasetType": "derivative", "GeneratedBy": []}"#,
            "GeneratedBy: 0 item(s), at least 1 required",
        ),
        (
            r#"{"Name": "x", "BIDSVersion": "1.11.1", "DatasetType": "derivative", "GeneratedBy": [{"Version": "1"}]}"#,
            "GeneratedBy[0]: required key \"Name\" missing",
        ),
        (
            r#"{"Name": "x", "BIDSVersion": "1.11.1", "DatasetType": "derivative", "GeneratedBy": [{"Name": "s", "CommandLine": "s run"}]}"#,
            "GeneratedBy[0]: key CommandLine is not defined by the schema",
        ),
        (
            r#"{"Name": "x", "BIDSVersion": 1.11, "DatasetType": "derivative", "GeneratedBy": [{"Name": "s"}]}"#,
            "BIDSVersion: not a string: 1.11",
        ),
        (
            r#"{"Name": "x", "BIDSVersion": "1.11.1", "DatasetType": "derived", "GeneratedBy": [{"Name": "s"}]}"#,
            "DatasetType: \"derived\" not one of",
        ),
        (
            r#"{"Name": "x", "BIDSVersion": "1.11.1", "DatasetType": "derivative", "GeneratedBy": [{"Name": "s"}], "Command": "s"}"#,
            "field Command is not a dataset_description field",
        ),
    ];
    for (text, expected) in cases {
        let problems = description_problems(&serde_json::from_str(text).unwrap(), &rules);
        assert!(problems.iter().any(|problem| problem.starts_with(expected)), "{expected}: {problems:?}");
    }
}
