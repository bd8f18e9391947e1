//! Fuzz target: any bytes as the three probe files of a field must give a summary or a clean
//! error, never a panic, a hang or a summary that contradicts itself.
//!
//! The input is one configuration byte, then the three probe files' texts (finest first)
//! separated by 0xFF bytes (a byte that never occurs in UTF-8 text). A missing second or third
//! text repeats the one before, so that well-formed fields reach the estimates. The
//! configuration byte picks tiny chunk and block sizes (so that records straddle the reader's
//! block boundaries and the rows the chunk boundaries) and whether the id column is named. The
//! columns to estimate are taken from the finest file's header. Each input runs twice: without
//! and with the per-point file.
#![no_main]
use libfuzzer_sys::fuzz_target;
use meshbound::estimate::three_grid::ThreeGridSettings;
use meshbound::field::{assess_field_with, FieldOptions, FieldSpec};

/// Up to four quantity columns from the header (first line, comma-separated, trimmed, after
/// the id column); `q` when the header gives none usable.
fn columns(finest: &[u8], id: &str) -> Vec<String> {
    let line = finest.split(|&b| b == b'\n').next().unwrap_or(&[]);
    let line = String::from_utf8_lossy(line);
    let mut out: Vec<String> = Vec::new();
    for name in line.split(',').skip(1).map(|s| s.trim().trim_matches('"')) {
        if !name.is_empty() && name != "id" && name != id && !out.iter().any(|c| c == name) {
            out.push(name.to_string());
        }
        if out.len() == 4 {
            break;
        }
    }
    if out.is_empty() {
        out.push("q".to_string());
    }
    out
}

fuzz_target!(|data: &[u8]| {
    let Some((&config, rest)) = data.split_first() else {
        return;
    };
    let mut parts: Vec<&[u8]> = rest.splitn(3, |&b| b == 0xFF).collect();
    while parts.len() < 3 {
        let last = parts[parts.len() - 1];
        parts.push(last);
    }
    let Ok(dir) = tempfile::tempdir() else { return };
    let mut files = Vec::with_capacity(3);
    for (i, text) in parts.iter().enumerate() {
        let p = dir.path().join(format!("L{}.csv", i + 1));
        if std::fs::write(&p, text).is_err() {
            return;
        }
        files.push(p);
    }
    let header_id = String::from_utf8_lossy(parts[0].split(|&b| b == b',').next().unwrap_or(&[]))
        .trim()
        .to_string();
    let id = (config & 0x80 != 0 && !header_id.is_empty()).then_some(header_id.clone());
    let opts = FieldOptions {
        chunk_rows: 1 + usize::from(config & 0x07),
        block_bytes: 1 + 7 * usize::from((config >> 3) & 0x0F),
    };
    let mut spec = FieldSpec {
        name: "fuzz".to_string(),
        columns: columns(parts[0], id.as_deref().unwrap_or(&header_id)),
        id,
        files,
        write: None,
        reading: Default::default(),
        probe_points: None,
        estimate: Default::default(),
    };
    let h = [1.0, 1.3, 1.69];
    let settings = ThreeGridSettings::default();
    let first = assess_field_with(&spec, h, &settings, &opts, None);
    if let Ok(s) = &first {
        for c in &s.columns {
            let k = &c.classes;
            assert_eq!(
                k.monotonic + k.oscillatory + k.divergent + k.no_change + k.none,
                s.points,
                "every point has one class"
            );
            for v in [
                c.mean_order,
                c.median_order,
                c.mean_relative,
                c.max_relative,
            ]
            .into_iter()
            .flatten()
            {
                assert!(v.is_finite(), "a summary figure is not finite: {v}");
            }
        }
    }
    let out = dir.path().join("points.csv");
    spec.write = Some(out.clone());
    let second = match meshbound::sink::DirectFile::create(&out) {
        Ok(sink) => assess_field_with(&spec, h, &settings, &opts, Some(Box::new(sink))),
        Err(_) => return,
    };
    assert_eq!(
        first.is_ok(),
        second.is_ok(),
        "writing the per-point file changed the outcome: {first:?} / {second:?}"
    );
    match second {
        Ok(s) => {
            assert_eq!(s.points, first.map(|f| f.points).unwrap_or(0));
            assert!(out.exists(), "the per-point file is missing after success");
        }
        Err(_) => assert!(!out.exists(), "a per-point file was left after an error"),
    }
    // Nothing but the inputs and, after success, the per-point file: no temporary file left.
    let left = std::fs::read_dir(dir.path()).map_or(0, |d| d.count());
    assert!(left <= 4, "{left} files left in the folder");
});
