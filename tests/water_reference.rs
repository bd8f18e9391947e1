//! Cross-check of `meshbound::water` against the independent IAPWS-IF97 implementation in the
//! PyPI package `iapws`, via the values in `tests/reference/iapws_grid.json` (produced by
//! `tests/reference/iapws_grid.py`; see that script for how to regenerate it).
//!
//! The test fails if the JSON file is missing, unreadable or holds no points.

use meshbound::water;
use serde::Deserialize;
use std::path::PathBuf;

/// Agreement required with `iapws` (both implement the same equations; differences are
/// rounding only).
const MAX_RELATIVE: f64 = 1e-9;

#[derive(Deserialize)]
struct SaturationPressure {
    temperature_k: f64,
    pressure_pa: f64,
}

#[derive(Deserialize)]
struct SaturationTemperature {
    pressure_pa: f64,
    temperature_k: f64,
}

#[derive(Deserialize)]
struct Region1 {
    temperature_k: f64,
    pressure_pa: f64,
    specific_volume_m3_per_kg: f64,
    density_kg_per_m3: f64,
}

#[derive(Deserialize)]
struct Grid {
    iapws_version: String,
    saturation_pressure: Vec<SaturationPressure>,
    saturation_temperature: Vec<SaturationTemperature>,
    region1: Vec<Region1>,
}

fn load() -> Grid {
    // CI may point at a freshly regenerated file (see .ci/references).
    let path = std::env::var_os("MESHBOUND_IAPWS_REFERENCE")
        .map(PathBuf::from)
        .unwrap_or_else(|| {
            PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("tests/reference/iapws_grid.json")
        });
    let text = std::fs::read_to_string(&path).unwrap_or_else(|e| {
        panic!(
            "cannot read {}: {e} (run tests/reference/iapws_grid.py)",
            path.display()
        )
    });
    let grid: Grid = serde_json::from_str(&text)
        .unwrap_or_else(|e| panic!("cannot parse {}: {e}", path.display()));
    assert!(
        !grid.iapws_version.is_empty(),
        "the reference file does not record the iapws version"
    );
    // The generator writes 32 saturation pressures, 10 saturation temperatures and 250
    // region 1 points; demand a good part of that so a truncated file fails.
    assert!(
        grid.saturation_pressure.len() >= 20,
        "too few saturation pressures in the reference file: {}",
        grid.saturation_pressure.len()
    );
    assert!(
        grid.saturation_temperature.len() >= 5,
        "too few saturation temperatures in the reference file: {}",
        grid.saturation_temperature.len()
    );
    assert!(
        grid.region1.len() >= 100,
        "too few region 1 points in the reference file: {}",
        grid.region1.len()
    );
    grid
}

fn rel(a: f64, b: f64) -> f64 {
    ((a - b) / b).abs()
}

#[test]
fn saturation_pressure_matches_iapws() {
    // Reference: PyPI iapws, iapws.iapws97._PSat_T (IAPWS R7-97(2012) eq. 30).
    let grid = load();
    let mut worst = 0.0f64;
    for point in &grid.saturation_pressure {
        let p = water::saturation_pressure(point.temperature_k).unwrap();
        let d = rel(p, point.pressure_pa);
        worst = worst.max(d);
        assert!(
            d <= MAX_RELATIVE,
            "p_s({} K) = {p} Pa, iapws {} Pa: relative difference {d:e}",
            point.temperature_k,
            point.pressure_pa
        );
    }
    println!(
        "saturation pressure: {} points, largest relative difference {worst:e} (iapws {})",
        grid.saturation_pressure.len(),
        grid.iapws_version
    );
}

#[test]
fn saturation_temperature_matches_iapws() {
    // Reference: PyPI iapws, iapws.iapws97._TSat_P (IAPWS R7-97(2012) eq. 31).
    let grid = load();
    let mut worst = 0.0f64;
    for point in &grid.saturation_temperature {
        let t = water::saturation_temperature(point.pressure_pa).unwrap();
        let d = rel(t, point.temperature_k);
        worst = worst.max(d);
        assert!(
            d <= MAX_RELATIVE,
            "T_s({} Pa) = {t} K, iapws {} K: relative difference {d:e}",
            point.pressure_pa,
            point.temperature_k
        );
    }
    println!(
        "saturation temperature: {} points, largest relative difference {worst:e} (iapws {})",
        grid.saturation_temperature.len(),
        grid.iapws_version
    );
}

#[test]
fn region1_matches_iapws() {
    // Reference: PyPI iapws, iapws.iapws97._Region1 (IAPWS R7-97(2012) region 1, eq. 7).
    let grid = load();
    let mut worst_v = 0.0f64;
    let mut worst_rho = 0.0f64;
    for point in &grid.region1 {
        let (t, p) = (point.temperature_k, point.pressure_pa);
        let v = water::specific_volume(t, p).unwrap();
        let rho = water::density(t, p).unwrap();
        let dv = rel(v, point.specific_volume_m3_per_kg);
        let drho = rel(rho, point.density_kg_per_m3);
        worst_v = worst_v.max(dv);
        worst_rho = worst_rho.max(drho);
        assert!(
            dv <= MAX_RELATIVE && drho <= MAX_RELATIVE,
            "at {t} K, {p} Pa: v = {v} (iapws {}), rho = {rho} (iapws {}): \
             relative differences {dv:e}, {drho:e}",
            point.specific_volume_m3_per_kg,
            point.density_kg_per_m3
        );
        // The Celsius helper agrees with the kelvin function.
        let rho_c = water::density_celsius(t - water::CELSIUS_OFFSET, p).unwrap();
        assert!(rel(rho_c, rho) <= 1e-12, "{rho_c} vs {rho}");
    }
    println!(
        "region 1: {} points, largest relative difference v {worst_v:e}, rho {worst_rho:e} \
         (iapws {})",
        grid.region1.len(),
        grid.iapws_version
    );
}
