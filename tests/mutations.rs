//! Property tests: mutated example studies and random YAML documents always give either a
//! result or a clean error — never a panic, and never a NaN or infinity in the JSON.

use proptest::prelude::*;
use std::path::{Path, PathBuf};

/// A copy of `studies/` in a temporary folder, so that mutated studies (which may name any
/// output path) never write into the repository.
fn studies_copy() -> &'static Path {
    static DIR: std::sync::OnceLock<tempfile::TempDir> = std::sync::OnceLock::new();
    DIR.get_or_init(|| {
        let d = tempfile::tempdir().unwrap();
        copy_dir(
            &PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("studies"),
            d.path(),
        );
        d
    })
    .path()
}

fn copy_dir(from: &Path, to: &Path) {
    for e in std::fs::read_dir(from).unwrap() {
        let e = e.unwrap();
        let target = to.join(e.file_name());
        if e.file_type().unwrap().is_dir() {
            std::fs::create_dir_all(&target).unwrap();
            copy_dir(&e.path(), &target);
        } else {
            std::fs::copy(e.path(), target).unwrap();
        }
    }
}

fn examples() -> Vec<(PathBuf, String)> {
    let root = studies_copy().to_path_buf();
    let mut v = Vec::new();
    for e in std::fs::read_dir(&root).unwrap() {
        let p = e.unwrap().path();
        if p.extension().and_then(|x| x.to_str()) == Some("yaml") {
            let t = std::fs::read_to_string(&p).unwrap();
            v.push((p, t));
        }
    }
    v.sort();
    v
}

fn run(text: &str, path: &Path) {
    if let Ok(study) = meshbound::study::parse(text, path) {
        if let Ok(a) = meshbound::assess::run(&study, &meshbound::sink::Skip) {
            let json =
                String::from_utf8(meshbound::report::json::Json.export_one(&a, true)).unwrap();
            // serde_json writes a non-finite number as null, so the JSON always parses back.
            assert!(serde_json::from_str::<serde_json::Value>(&json).is_ok());
            for f in [
                meshbound::report::Format::Table,
                meshbound::report::Format::Markdown,
                meshbound::report::Format::Csv,
            ] {
                let text = String::from_utf8_lossy(&f.exporter().export(&a)).into_owned();
                assert!(
                    !text.contains("NaN"),
                    "NaN in a {f:?} report of {}",
                    a.title
                );
            }
        }
    }
}

const PIECES: &[&str] = &[
    "0", "-1", "1e308", "-1e308", "5e-324", ".nan", ".inf", "''", "[]", "{}", "~", "1%", "-3%",
    "x", "\n", ": ", "- ", "&a", "*a", "\"", "0.0", "3", "1e-300",
];

proptest! {
    #![proptest_config(ProptestConfig { cases: 400, ..ProptestConfig::default() })]

    #[test]
    fn mutated_example_studies_never_panic(
        which in 0usize..64,
        edits in prop::collection::vec((0usize..100_000, 0usize..PIECES.len(), 0usize..6), 1..6),
    ) {
        let ex = examples();
        let (path, text) = &ex[which % ex.len()];
        let mut t = text.clone();
        for (pos, piece, cut) in edits {
            let mut at = pos % (t.len() + 1);
            while !t.is_char_boundary(at) { at -= 1; }
            let mut end = (at + cut).min(t.len());
            while !t.is_char_boundary(end) { end -= 1; }
            t.replace_range(at..end.max(at), PIECES[piece]);
        }
        run(&t, path);
    }

    #[test]
    fn numbers_replaced_in_example_studies_never_panic(
        which in 0usize..64,
        values in prop::collection::vec(prop_oneof![
            any::<f64>().prop_filter("finite", |v| v.is_finite()),
            Just(0.0), Just(-0.0), Just(f64::MIN_POSITIVE), Just(5e-324), Just(1e300), Just(-1e300),
        ], 1..40),
    ) {
        let ex = examples();
        let (path, text) = &ex[which % ex.len()];
        // Replace every number after `: ` or `, ` in order with the generated ones.
        let mut out = String::with_capacity(text.len());
        let mut k = 0;
        for tok in text.split_inclusive([' ', ',', '}', ']']) {
            let trimmed = tok.trim_end_matches([' ', ',', '}', ']']);
            if k < values.len() && trimmed.parse::<f64>().is_ok() {
                out.push_str(&format!("{:e}", values[k]));
                out.push_str(&tok[trimmed.len()..]);
                k += 1;
            } else {
                out.push_str(tok);
            }
        }
        run(&out, path);
    }

    #[test]
    fn random_yaml_documents_never_panic(doc in "[a-z_:\\-\\[\\]{}, 0-9.%&*#\\n]{0,300}") {
        let p = studies_copy().join("random.yaml");
        run(&format!("format: 1\n{doc}"), &p);
        run(&doc, &p);
    }
}
