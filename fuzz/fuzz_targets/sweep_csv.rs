//! Fuzz target: any bytes as a sweep CSV file must give a result or a clean error.
#![no_main]
use libfuzzer_sys::fuzz_target;

const STUDY: &str = "format: 1
meshes:
  - {name: A, size: 1.0}
  - {name: B, size: 1.5}
  - {name: C, size: 2.25}
sweeps:
  s:
    x: sigma
    responses: [efficiency]
    data:
      A: {file: a.csv}
      B: {sigma: [0.1, 0.2, 0.3, 0.4], efficiency: [0.8, 0.88, 0.9, 0.9]}
      C: {sigma: [0.1, 0.2, 0.3, 0.4], efficiency: [0.78, 0.87, 0.89, 0.89]}
    breakdown:
      - {response: efficiency, drop: 1%, reference: highest}
    band: {response: efficiency}
";

fuzz_target!(|data: &[u8]| {
    let Ok(dir) = tempfile::tempdir() else { return };
    if std::fs::write(dir.path().join("a.csv"), data).is_err() {
        return;
    }
    let path = dir.path().join("s.yaml");
    if let Ok(study) = meshbound::study::parse(STUDY, &path) {
        let _ = meshbound::assess::run(&study, &meshbound::sink::Skip);
    }
});
