//! Fuzz target: the estimators on arbitrary floats (sizes and values) must return a result
//! or an error, never panic or return a non-finite uncertainty.
#![no_main]
use libfuzzer_sys::fuzz_target;
use meshbound::estimate::{least_squares, three_grid};

fuzz_target!(|data: &[u8]| {
    let floats: Vec<f64> = data
        .chunks_exact(8)
        .map(|c| f64::from_le_bytes([c[0], c[1], c[2], c[3], c[4], c[5], c[6], c[7]]))
        .collect();
    if floats.len() >= 6 {
        let h = [floats[0], floats[1], floats[2]];
        let phi = [floats[3], floats[4], floats[5]];
        if let Ok(r) = three_grid::estimate(h, phi, &three_grid::ThreeGridSettings::default()) {
            if let Some(u) = r.uncertainty {
                assert!(!u.is_nan(), "NaN uncertainty for h {h:?} phi {phi:?}");
            }
        }
    }
    if floats.len() >= 8 && floats.len() % 2 == 0 {
        let n = floats.len() / 2;
        let names: Vec<String> = (0..n).map(|i| format!("m{i}")).collect();
        let (h, phi) = floats.split_at(n);
        if let Ok(r) = least_squares::estimate(&names, h, phi, &least_squares::LsSettings::default()) {
            for m in &r.per_mesh {
                assert!(!m.uncertainty.is_nan());
            }
        }
    }
    if floats.len() >= 4 {
        let n = floats.len() / 2;
        let (x, y) = floats.split_at(n);
        if let Ok(f) = meshbound::sweep::Interpolant::new(x, &y[..n], meshbound::sweep::Interpolation::Pchip) {
            let (lo, hi) = f.x_range();
            let _ = f.eval(0.5 * (lo + hi));
        }
    }
});
