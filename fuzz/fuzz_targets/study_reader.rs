//! Fuzz target: any bytes as a study file must give a result or a clean error.
#![no_main]
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    if let Ok(text) = std::str::from_utf8(data) {
        if let Ok(study) = meshbound::study::parse(text, std::path::Path::new("fuzz.yaml")) {
            if let Ok(a) = meshbound::assess::run(&study, &meshbound::sink::Skip) {
                use meshbound::report::Exporter;
                let _ = meshbound::report::json::Json.export(&a);
                let _ = meshbound::report::table::Table.export(&a);
            }
        }
    }
});
