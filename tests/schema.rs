//! The JSON Schema of the study file: kept in sync with the code, accepting every example
//! study and refusing a misspelt key.

mod common;

use common::*;

fn schema() -> serde_json::Value {
    let text = std::fs::read_to_string(root().join("docs/study.schema.json"))
        .expect("docs/study.schema.json");
    serde_json::from_str(&text).unwrap()
}

#[test]
fn committed_schema_matches_the_code() {
    let o = run(&["schema"]);
    assert_eq!(o.status.code(), Some(0), "{}", show(&o));
    let committed = std::fs::read_to_string(root().join("docs/study.schema.json")).unwrap();
    assert_eq!(
        String::from_utf8_lossy(&o.stdout),
        committed,
        "docs/study.schema.json is out of date: run `cargo run -- schema -o docs/study.schema.json`"
    );
}

fn yaml_as_json(path: &std::path::Path) -> serde_json::Value {
    let text = std::fs::read_to_string(path).unwrap();
    serde_yaml::from_str::<serde_json::Value>(&text).unwrap()
}

#[test]
fn schema_accepts_every_example_study_and_refuses_a_misspelt_key() {
    let validator = jsonschema::validator_for(&schema()).expect("a valid JSON Schema");
    let mut n = 0;
    for e in std::fs::read_dir(root().join("studies")).unwrap() {
        let p = e.unwrap().path();
        if p.extension().and_then(|x| x.to_str()) != Some("yaml") {
            continue;
        }
        n += 1;
        let doc = yaml_as_json(&p);
        let errors: Vec<String> = validator.iter_errors(&doc).map(|e| e.to_string()).collect();
        assert!(errors.is_empty(), "{}: {errors:?}", p.display());
    }
    assert!(n >= 3);
    let mut doc = yaml_as_json(&root().join("studies/pump-turbine-pump-mode.yaml"));
    let meshes = doc["meshes"].take();
    doc["meshs"] = meshes;
    assert!(!validator.is_valid(&doc), "a misspelt key must be refused");
    let mut doc = yaml_as_json(&root().join("studies/pump-turbine-cavitation.yaml"));
    doc["sweeps"]["cavitation"]["breakdown"][0]["drop"] = serde_json::json!("one percent");
    assert!(
        !validator.is_valid(&doc),
        "a drop that is not a number or percentage must be refused"
    );
}
