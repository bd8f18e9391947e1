//! Properties of water from IAPWS-IF97.
//!
//! Source: IAPWS R7-97(2012), "Revised Release on the IAPWS Industrial Formulation 1997 for
//! the Thermodynamic Properties of Water and Steam".
//!
//! What is here, and nothing more:
//! - region 4, the saturation line: saturation pressure p_s(T) (eqs. 29–30) and saturation
//!   temperature T_s(p) (eq. 31), both from the ten coefficients of Table 34;
//! - region 1, the compressed liquid: specific volume v(T, p) from the 34-term dimensionless
//!   Gibbs free energy (eq. 7, Table 2), v = (R T / p) π γ_π (Table 3), and density ρ = 1/v.
//!
//! **Units.** Every function without a suffix takes and returns SI units: temperature in
//! kelvin \[K\], pressure in pascal \[Pa\] (absolute), specific volume in m³/kg, density in
//! kg/m³. The `_celsius` variants take (and, for the saturation temperature, return) degrees
//! Celsius, with T \[K\] = t \[°C\] + 273.15; their range checks and error messages are in °C.
//!
//! **Ranges.** Inputs outside the range of validity of the equation, and non-finite inputs,
//! are refused with a [`WaterError`] that names the value, its unit and the valid range:
//! - region 4: 273.15 K ≤ T ≤ 647.096 K, and 611.212677 Pa ≤ p ≤ 22.064 MPa;
//! - region 1: 273.15 K ≤ T ≤ 623.15 K and p_s(T) ≤ p ≤ 100 MPa.
//!
//! **Tolerance at the saturation line.** Region 1 accepts pressures down to
//! p_s(T)·(1 − [`SATURATION_TOLERANCE`]), i.e. one part in a million below saturation, and
//! evaluates the region 1 equation there as it stands (its smooth continuation into the
//! metastable liquid; over that sliver the density changes by about 1e-11 relative). This lets a
//! pressure that is the saturation pressure rounded to six or more significant digits, or
//! computed with another implementation, be used. Anything lower is vapour, not liquid, and is
//! refused with [`WaterError::BelowSaturation`].

use std::fmt;

/// Offset between the Celsius and the kelvin scale: T \[K\] = t \[°C\] + 273.15.
pub const CELSIUS_OFFSET: f64 = 273.15;

/// Lowest temperature of regions 1 and 4, 273.15 K (IAPWS R7-97(2012), section 4 and 8.1).
pub const T_MIN: f64 = 273.15;

/// Critical temperature, 647.096 K: highest temperature of region 4 (IAPWS R7-97(2012), eq. 3).
pub const T_CRITICAL: f64 = 647.096;

/// Highest temperature of region 1, 623.15 K (IAPWS R7-97(2012), section 4).
pub const REGION1_T_MAX: f64 = 623.15;

/// Lowest pressure of region 4, p_s(273.15 K) = 611.212677 Pa (IAPWS R7-97(2012), section 8.1).
pub const P_SAT_MIN: f64 = 611.212677;

/// Critical pressure, 22.064 MPa = 22.064e6 Pa: highest pressure of region 4
/// (IAPWS R7-97(2012), eq. 4).
pub const P_CRITICAL: f64 = 22.064e6;

/// Highest pressure of region 1, 100 MPa = 100e6 Pa (IAPWS R7-97(2012), section 4).
pub const REGION1_P_MAX: f64 = 100e6;

/// Relative tolerance below the saturation pressure that region 1 still accepts (1e-6, a
/// project choice; see the module documentation).
pub const SATURATION_TOLERANCE: f64 = 1e-6;

/// Specific gas constant of water, R = 0.461526 kJ/(kg K) = 461.526 J/(kg K)
/// (IAPWS R7-97(2012), eq. 1).
const R_SPECIFIC: f64 = 461.526;

/// Temperature scale in which a value was given, for error messages.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum TemperatureScale {
    /// Kelvin \[K\].
    Kelvin,
    /// Degrees Celsius \[°C\].
    Celsius,
}

impl TemperatureScale {
    /// The unit symbol.
    pub fn symbol(self) -> &'static str {
        match self {
            TemperatureScale::Kelvin => "K",
            TemperatureScale::Celsius => "°C",
        }
    }

    /// Converts a temperature in kelvin into this scale.
    fn kelvin_to_scale(self, kelvin: f64) -> f64 {
        match self {
            TemperatureScale::Kelvin => kelvin,
            TemperatureScale::Celsius => kelvin - CELSIUS_OFFSET,
        }
    }
}

impl fmt::Display for TemperatureScale {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.symbol())
    }
}

/// Why a water property could not be computed.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum WaterError {
    /// An input was NaN or infinite.
    #[error("{quantity} {value} {unit} is not a finite number")]
    NotFinite {
        /// What the value is (for example "temperature").
        quantity: &'static str,
        /// The value as given.
        value: f64,
        /// Its unit.
        unit: &'static str,
    },
    /// An input lies outside the range of validity of the equation.
    #[error(
        "{quantity} {value} {unit} is outside the valid range {min} {unit} to {max} {unit} \
         of IAPWS-IF97 {region}"
    )]
    OutOfRange {
        /// What the value is (for example "temperature").
        quantity: &'static str,
        /// The value as given.
        value: f64,
        /// Its unit (the same for `min` and `max`).
        unit: &'static str,
        /// Lowest valid value.
        min: f64,
        /// Highest valid value.
        max: f64,
        /// The equation whose range it is (for example "region 1 (compressed liquid)").
        region: &'static str,
    },
    /// The pressure is below the saturation pressure at that temperature: the water is vapour
    /// there, and region 1 (liquid) does not apply.
    #[error(
        "pressure {pressure} Pa is below the saturation pressure {saturation_pressure} Pa \
         at {temperature} {scale}: water is vapour there, not liquid; IAPWS-IF97 region 1 needs \
         p_s(T) <= p <= 100000000 Pa (accepting down to p_s(T) * (1 - {tolerance}))"
    )]
    BelowSaturation {
        /// The pressure given \[Pa\].
        pressure: f64,
        /// Saturation pressure at the temperature given \[Pa\].
        saturation_pressure: f64,
        /// The temperature as given, in `scale`.
        temperature: f64,
        /// The scale of `temperature`.
        scale: TemperatureScale,
        /// The relative tolerance applied ([`SATURATION_TOLERANCE`]).
        tolerance: f64,
    },
}

/// Coefficients n_1 … n_10 of the region 4 equations (IAPWS R7-97(2012), Table 34).
const N4: [f64; 10] = [
    0.116_705_214_527_67e4,
    -0.724_213_167_032_06e6,
    -0.170_738_469_400_92e2,
    0.120_208_247_024_70e5,
    -0.323_255_503_223_33e7,
    0.149_151_086_135_30e2,
    -0.482_326_573_615_91e4,
    0.405_113_405_420_57e6,
    -0.238_555_575_678_49,
    0.650_175_348_447_98e3,
];

/// Region 1 terms (I_i, J_i, n_i), i = 1 … 34 (IAPWS R7-97(2012), Table 2).
const REGION1: [(i32, i32, f64); 34] = [
    (0, -2, 0.146_329_712_131_67),
    (0, -1, -0.845_481_871_691_14),
    (0, 0, -0.375_636_036_720_40e1),
    (0, 1, 0.338_551_691_683_85e1),
    (0, 2, -0.957_919_633_878_72),
    (0, 3, 0.157_720_385_132_28),
    (0, 4, -0.166_164_171_995_01e-1),
    (0, 5, 0.812_146_299_835_68e-3),
    (1, -9, 0.283_190_801_238_04e-3),
    (1, -7, -0.607_063_015_658_74e-3),
    (1, -1, -0.189_900_682_184_19e-1),
    (1, 0, -0.325_297_487_705_05e-1),
    (1, 1, -0.218_417_171_754_14e-1),
    (1, 3, -0.528_383_579_699_30e-4),
    (2, -3, -0.471_843_210_732_67e-3),
    (2, 0, -0.300_017_807_930_26e-3),
    (2, 1, 0.476_613_939_069_87e-4),
    (2, 3, -0.441_418_453_308_46e-5),
    (2, 17, -0.726_949_962_975_94e-15),
    (3, -4, -0.316_796_448_450_54e-4),
    (3, 0, -0.282_707_979_853_12e-5),
    (3, 6, -0.852_051_281_201_03e-9),
    (4, -5, -0.224_252_819_080_00e-5),
    (4, -2, -0.651_712_228_956_01e-6),
    (4, 10, -0.143_417_299_379_24e-12),
    (5, -8, -0.405_169_968_601_17e-6),
    (8, -11, -0.127_343_017_416_41e-8),
    (8, -6, -0.174_248_712_306_34e-9),
    (21, -29, -0.687_621_312_955_31e-18),
    (23, -31, 0.144_783_078_285_21e-19),
    (29, -38, 0.263_357_816_627_95e-22),
    (30, -39, -0.119_476_226_400_71e-22),
    (31, -40, 0.182_280_945_814_04e-23),
    (32, -41, -0.935_370_872_924_58e-25),
];

/// Reducing pressure of region 1, p* = 16.53 MPa (IAPWS R7-97(2012), eq. 7).
const REGION1_P_STAR: f64 = 16.53e6;
/// Reducing temperature of region 1, T* = 1386 K (IAPWS R7-97(2012), eq. 7).
const REGION1_T_STAR: f64 = 1386.0;

const REGION4: &str = "region 4 (saturation line)";
const REGION1_NAME: &str = "region 1 (compressed liquid)";

fn check_finite(quantity: &'static str, value: f64, unit: &'static str) -> Result<(), WaterError> {
    if value.is_finite() {
        Ok(())
    } else {
        Err(WaterError::NotFinite {
            quantity,
            value,
            unit,
        })
    }
}

fn check_range(
    quantity: &'static str,
    value: f64,
    unit: &'static str,
    (min, max): (f64, f64),
    region: &'static str,
) -> Result<(), WaterError> {
    check_finite(quantity, value, unit)?;
    if (min..=max).contains(&value) {
        Ok(())
    } else {
        Err(WaterError::OutOfRange {
            quantity,
            value,
            unit,
            min,
            max,
            region,
        })
    }
}

/// Temperature limits (min, max) in the given scale, written out so that messages in °C show
/// round numbers (0 °C, 350 °C, 373.946 °C) rather than the result of a subtraction.
fn temperature_limits(scale: TemperatureScale, region1: bool) -> (f64, f64) {
    match (scale, region1) {
        (TemperatureScale::Kelvin, false) => (T_MIN, T_CRITICAL),
        (TemperatureScale::Kelvin, true) => (T_MIN, REGION1_T_MAX),
        (TemperatureScale::Celsius, false) => (0.0, 373.946),
        (TemperatureScale::Celsius, true) => (0.0, 350.0),
    }
}

/// Checks a temperature given in `scale` and returns it in kelvin, clamped onto the kelvin
/// range so that a value on the Celsius boundary (for example 373.946 °C) cannot fall a
/// rounding error outside the kelvin one.
fn temperature_kelvin(
    value: f64,
    scale: TemperatureScale,
    region1: bool,
) -> Result<f64, WaterError> {
    let limits = temperature_limits(scale, region1);
    let region = if region1 { REGION1_NAME } else { REGION4 };
    check_range("temperature", value, scale.symbol(), limits, region)?;
    let kelvin = match scale {
        TemperatureScale::Kelvin => value,
        TemperatureScale::Celsius => value + CELSIUS_OFFSET,
    };
    let (kmin, kmax) = temperature_limits(TemperatureScale::Kelvin, region1);
    Ok(kelvin.clamp(kmin, kmax))
}

/// Eq. 29b–30 of IAPWS R7-97(2012) for a temperature already checked, in kelvin → Pa.
fn saturation_pressure_unchecked(t: f64) -> f64 {
    let n = &N4;
    // eq. 29b: θ = T/T* + n9 / (T/T* − n10), T* = 1 K
    let theta = t + n[8] / (t - n[9]);
    // eq. 30
    let a = theta * theta + n[0] * theta + n[1];
    let b = n[2] * theta * theta + n[3] * theta + n[4];
    let c = n[5] * theta * theta + n[6] * theta + n[7];
    let ratio = 2.0 * c / (-b + (b * b - 4.0 * a * c).sqrt());
    // p* = 1 MPa
    ratio.powi(4) * 1e6
}

/// Eq. 29a and 31 of IAPWS R7-97(2012) for a pressure already checked, Pa → K.
fn saturation_temperature_unchecked(p: f64) -> f64 {
    let n = &N4;
    // eq. 29a: β = (p/p*)^(1/4), p* = 1 MPa
    let beta = (p / 1e6).powf(0.25);
    let e = beta * beta + n[2] * beta + n[5];
    let f = n[0] * beta * beta + n[3] * beta + n[6];
    let g = n[1] * beta * beta + n[4] * beta + n[7];
    let d = 2.0 * g / (-f - (f * f - 4.0 * e * g).sqrt());
    // eq. 31, T* = 1 K
    (n[9] + d - ((n[9] + d).powi(2) - 4.0 * (n[8] + n[9] * d)).sqrt()) / 2.0
}

/// Region 1 specific volume for a state already checked: T \[K\], p \[Pa\] → m³/kg.
fn specific_volume_unchecked(t: f64, p: f64) -> f64 {
    let pi = p / REGION1_P_STAR;
    let tau = REGION1_T_STAR / t;
    // γ_π = Σ −n_i I_i (7.1 − π)^(I_i − 1) (τ − 1.222)^J_i (Table 4). Terms with I_i = 0 do
    // not depend on π and contribute nothing; they are kept in the table for completeness.
    let gamma_pi: f64 = REGION1
        .iter()
        .filter(|&&(i, _, _)| i != 0)
        .map(|&(i, j, n)| -n * f64::from(i) * (7.1 - pi).powi(i - 1) * (tau - 1.222).powi(j))
        .sum();
    // Table 3: v = (R T / p) π γ_π
    R_SPECIFIC * t / p * pi * gamma_pi
}

fn specific_volume_in(t_given: f64, scale: TemperatureScale, p: f64) -> Result<f64, WaterError> {
    let t = temperature_kelvin(t_given, scale, true)?;
    check_finite("pressure", p, "Pa")?;
    let ps = saturation_pressure_unchecked(t);
    if p > REGION1_P_MAX {
        return Err(WaterError::OutOfRange {
            quantity: "pressure",
            value: p,
            unit: "Pa",
            min: ps,
            max: REGION1_P_MAX,
            region: REGION1_NAME,
        });
    }
    if p < ps * (1.0 - SATURATION_TOLERANCE) {
        return Err(WaterError::BelowSaturation {
            pressure: p,
            saturation_pressure: ps,
            temperature: scale.kelvin_to_scale(t),
            scale,
            tolerance: SATURATION_TOLERANCE,
        });
    }
    Ok(specific_volume_unchecked(t, p))
}

/// Saturation pressure p_s \[Pa\] at temperature `temperature` \[K\] (IAPWS-IF97 region 4,
/// eqs. 29b–30).
///
/// Valid for 273.15 K ≤ T ≤ 647.096 K.
pub fn saturation_pressure(temperature: f64) -> Result<f64, WaterError> {
    let t = temperature_kelvin(temperature, TemperatureScale::Kelvin, false)?;
    Ok(saturation_pressure_unchecked(t))
}

/// Saturation pressure p_s \[Pa\] at temperature `temperature_celsius` \[°C\].
///
/// Valid for 0 °C ≤ t ≤ 373.946 °C.
pub fn saturation_pressure_celsius(temperature_celsius: f64) -> Result<f64, WaterError> {
    let t = temperature_kelvin(temperature_celsius, TemperatureScale::Celsius, false)?;
    Ok(saturation_pressure_unchecked(t))
}

/// Saturation temperature T_s \[K\] at pressure `pressure` \[Pa, absolute\] (IAPWS-IF97
/// region 4, eqs. 29a and 31).
///
/// Valid for 611.212677 Pa ≤ p ≤ 22.064 MPa.
pub fn saturation_temperature(pressure: f64) -> Result<f64, WaterError> {
    check_range("pressure", pressure, "Pa", (P_SAT_MIN, P_CRITICAL), REGION4)?;
    Ok(saturation_temperature_unchecked(pressure))
}

/// Saturation temperature \[°C\] at pressure `pressure` \[Pa, absolute\].
///
/// Valid for 611.212677 Pa ≤ p ≤ 22.064 MPa.
pub fn saturation_temperature_celsius(pressure: f64) -> Result<f64, WaterError> {
    saturation_temperature(pressure).map(|t| t - CELSIUS_OFFSET)
}

/// Specific volume v \[m³/kg\] of compressed liquid water at temperature `temperature` \[K\]
/// and pressure `pressure` \[Pa, absolute\] (IAPWS-IF97 region 1).
///
/// Valid for 273.15 K ≤ T ≤ 623.15 K and p_s(T) ≤ p ≤ 100 MPa, with the saturation
/// tolerance described in the module documentation.
pub fn specific_volume(temperature: f64, pressure: f64) -> Result<f64, WaterError> {
    specific_volume_in(temperature, TemperatureScale::Kelvin, pressure)
}

/// Specific volume v \[m³/kg\] of compressed liquid water at `temperature_celsius` \[°C\] and
/// `pressure` \[Pa, absolute\].
///
/// Valid for 0 °C ≤ t ≤ 350 °C and p_s(t) ≤ p ≤ 100 MPa.
pub fn specific_volume_celsius(temperature_celsius: f64, pressure: f64) -> Result<f64, WaterError> {
    specific_volume_in(temperature_celsius, TemperatureScale::Celsius, pressure)
}

/// Density ρ = 1/v \[kg/m³\] of compressed liquid water at temperature `temperature` \[K\]
/// and pressure `pressure` \[Pa, absolute\] (IAPWS-IF97 region 1).
///
/// Valid for 273.15 K ≤ T ≤ 623.15 K and p_s(T) ≤ p ≤ 100 MPa.
pub fn density(temperature: f64, pressure: f64) -> Result<f64, WaterError> {
    specific_volume(temperature, pressure).map(|v| 1.0 / v)
}

/// Density ρ = 1/v \[kg/m³\] of compressed liquid water at `temperature_celsius` \[°C\] and
/// `pressure` \[Pa, absolute\].
///
/// Valid for 0 °C ≤ t ≤ 350 °C and p_s(t) ≤ p ≤ 100 MPa.
pub fn density_celsius(temperature_celsius: f64, pressure: f64) -> Result<f64, WaterError> {
    specific_volume_celsius(temperature_celsius, pressure).map(|v| 1.0 / v)
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    /// Nine significant digits, as printed in the IAPWS check tables.
    const NINE_DIGITS: f64 = 5e-9;

    #[test]
    fn saturation_pressure_table_35() {
        // IAPWS R7-97(2012), Table 35: p_s in MPa, here in Pa.
        let cases = [
            (300.0, 0.353_658_941e-2), // Table 35, T = 300 K
            (500.0, 0.263_889_776e1),  // Table 35, T = 500 K
            (600.0, 0.123_443_146e2),  // Table 35, T = 600 K
        ];
        for (t, p_mpa) in cases {
            let p = saturation_pressure(t).unwrap();
            assert_relative_eq!(p, p_mpa * 1e6, max_relative = NINE_DIGITS);
        }
    }

    #[test]
    fn saturation_temperature_table_36() {
        // IAPWS R7-97(2012), Table 36: T_s in K at p in MPa.
        let cases = [
            (0.1, 0.372_755_919e3),  // Table 36, p = 0.1 MPa
            (1.0, 0.453_035_632e3),  // Table 36, p = 1 MPa
            (10.0, 0.584_149_488e3), // Table 36, p = 10 MPa
        ];
        for (p_mpa, t) in cases {
            let ts = saturation_temperature(p_mpa * 1e6).unwrap();
            assert_relative_eq!(ts, t, max_relative = NINE_DIGITS);
        }
    }

    #[test]
    fn specific_volume_table_5() {
        // IAPWS R7-97(2012), Table 5: v in m³/kg at (T in K, p in MPa).
        let cases = [
            (300.0, 3.0, 0.100_215_168e-2),  // Table 5, T = 300 K, p = 3 MPa
            (300.0, 80.0, 0.971_180_894e-3), // Table 5, T = 300 K, p = 80 MPa
            (500.0, 3.0, 0.120_241_800e-2),  // Table 5, T = 500 K, p = 3 MPa
        ];
        for (t, p_mpa, v) in cases {
            let got = specific_volume(t, p_mpa * 1e6).unwrap();
            assert_relative_eq!(got, v, max_relative = NINE_DIGITS);
            assert_relative_eq!(
                density(t, p_mpa * 1e6).unwrap(),
                1.0 / v,
                max_relative = NINE_DIGITS
            );
        }
    }

    #[test]
    fn celsius_helpers_agree_with_kelvin() {
        // Conversion T [K] = t [°C] + 273.15 (definition of the Celsius scale).
        let t_c = 26.85; // 300 K
        assert_relative_eq!(
            saturation_pressure_celsius(t_c).unwrap(),
            saturation_pressure(300.0).unwrap(),
            max_relative = 1e-14
        );
        assert_relative_eq!(
            density_celsius(t_c, 3e6).unwrap(),
            density(300.0, 3e6).unwrap(),
            max_relative = 1e-14
        );
        assert_relative_eq!(
            specific_volume_celsius(t_c, 3e6).unwrap(),
            specific_volume(300.0, 3e6).unwrap(),
            max_relative = 1e-14
        );
        // Table 36, p = 0.1 MPa: 372.755919 K = 99.605919 °C
        assert_relative_eq!(
            saturation_temperature_celsius(0.1e6).unwrap(),
            372.755_919 - 273.15,
            max_relative = 1e-8
        );
    }

    #[test]
    fn saturation_round_trip() {
        // Eqs. 30 and 31 are exact inverses of each other (IAPWS R7-97(2012), section 8.1).
        for t in [273.15, 280.0, 300.0, 373.15, 450.0, 550.0, 640.0] {
            let p = saturation_pressure(t).unwrap();
            assert_relative_eq!(saturation_temperature(p).unwrap(), t, max_relative = 1e-12);
        }
    }

    #[test]
    fn range_ends_accepted() {
        // Range of region 4: 273.15 K ≤ T ≤ 647.096 K (IAPWS R7-97(2012), section 8.1).
        assert!(saturation_pressure(T_MIN).is_ok());
        assert!(saturation_pressure(T_CRITICAL).is_ok());
        assert!(saturation_pressure_celsius(0.0).is_ok());
        assert!(saturation_pressure_celsius(373.946).is_ok());
        assert!(saturation_temperature(P_SAT_MIN).is_ok());
        assert!(saturation_temperature(P_CRITICAL).is_ok());
        // p_s(273.15 K) = 611.213 Pa (IAPWS R7-97(2012), section 8.1, printed to 6 digits)
        assert_relative_eq!(
            saturation_pressure(T_MIN).unwrap(),
            611.213,
            max_relative = 1e-6
        );
        // Range of region 1: 273.15 K ≤ T ≤ 623.15 K, p ≤ 100 MPa (section 4).
        assert!(density(REGION1_T_MAX, REGION1_P_MAX).is_ok());
        assert!(density(T_MIN, REGION1_P_MAX).is_ok());
        assert!(density_celsius(350.0, 20e6).is_ok());
        assert!(density_celsius(0.0, 1e5).is_ok());
    }

    #[test]
    fn out_of_range_temperatures_refused() {
        for t in [273.0, 647.1, 1000.0, -5.0] {
            let err = saturation_pressure(t).unwrap_err();
            assert!(matches!(err, WaterError::OutOfRange { .. }), "{err}");
        }
        let err = saturation_pressure(700.0).unwrap_err();
        let msg = err.to_string();
        assert!(msg.contains("700 K"), "{msg}");
        assert!(msg.contains("273.15 K to 647.096 K"), "{msg}");
        assert!(msg.contains("region 4"), "{msg}");

        let msg = saturation_pressure_celsius(400.0).unwrap_err().to_string();
        assert!(msg.contains("400 °C"), "{msg}");
        assert!(msg.contains("0 °C to 373.946 °C"), "{msg}");

        // Region 1 ends at 623.15 K although region 4 goes on to 647.096 K.
        let msg = density(630.0, 20e6).unwrap_err().to_string();
        assert!(msg.contains("630 K"), "{msg}");
        assert!(msg.contains("273.15 K to 623.15 K"), "{msg}");
        assert!(msg.contains("region 1"), "{msg}");
        let msg = density_celsius(-1.0, 1e5).unwrap_err().to_string();
        assert!(msg.contains("-1 °C"), "{msg}");
        assert!(msg.contains("0 °C to 350 °C"), "{msg}");
    }

    #[test]
    fn out_of_range_pressures_refused() {
        for p in [600.0, 22.1e6, 0.0, -1.0] {
            let err = saturation_temperature(p).unwrap_err();
            assert!(matches!(err, WaterError::OutOfRange { .. }), "{err}");
        }
        let msg = saturation_temperature(30e6).unwrap_err().to_string();
        assert!(msg.contains("30000000 Pa"), "{msg}");
        assert!(msg.contains("611.212677 Pa to 22064000 Pa"), "{msg}");

        let msg = density(300.0, 101e6).unwrap_err().to_string();
        assert!(msg.contains("101000000 Pa"), "{msg}");
        assert!(msg.contains("100000000 Pa"), "{msg}");
    }

    #[test]
    fn below_saturation_refused_with_tolerance() {
        // p_s(300 K) = 3536.58941 Pa (Table 35): 3000 Pa at 300 K is vapour.
        let err = density(300.0, 3000.0).unwrap_err();
        assert!(matches!(err, WaterError::BelowSaturation { .. }), "{err}");
        let msg = err.to_string();
        assert!(msg.contains("3000 Pa"), "{msg}");
        assert!(msg.contains("300 K"), "{msg}");
        assert!(msg.contains("vapour"), "{msg}");
        let msg = density_celsius(26.85, 3000.0).unwrap_err().to_string();
        assert!(msg.contains("°C"), "{msg}");

        // At saturation, and within the documented tolerance below it, the liquid is accepted.
        let ps = saturation_pressure(300.0).unwrap();
        assert!(density(300.0, ps).is_ok());
        assert!(density(300.0, ps * (1.0 - 0.5 * SATURATION_TOLERANCE)).is_ok());
        assert!(density(300.0, ps * (1.0 - 2.0 * SATURATION_TOLERANCE)).is_err());
        // Table 35 value rounded to 9 digits, just below p_s as computed: accepted.
        assert!(density(300.0, 3536.589).is_ok());
    }

    #[test]
    fn non_finite_refused() {
        for x in [f64::NAN, f64::INFINITY, f64::NEG_INFINITY] {
            assert!(matches!(
                saturation_pressure(x),
                Err(WaterError::NotFinite { .. })
            ));
            assert!(matches!(
                saturation_pressure_celsius(x),
                Err(WaterError::NotFinite { .. })
            ));
            assert!(matches!(
                saturation_temperature(x),
                Err(WaterError::NotFinite { .. })
            ));
            assert!(matches!(density(x, 1e6), Err(WaterError::NotFinite { .. })));
            assert!(matches!(
                density(300.0, x),
                Err(WaterError::NotFinite { .. })
            ));
            assert!(matches!(
                density_celsius(20.0, x),
                Err(WaterError::NotFinite { .. })
            ));
        }
        let msg = saturation_pressure(f64::NAN).unwrap_err().to_string();
        assert!(msg.contains("temperature NaN K"), "{msg}");
    }

    #[test]
    fn liquid_density_plausible() {
        // Sanity: the density of liquid water near 4 °C and 0.1 MPa is about 1000 kg/m³
        // (common knowledge; IF97 gives 999.97).
        let rho = density_celsius(4.0, 0.101_325e6).unwrap();
        assert!((999.0..1001.0).contains(&rho), "{rho}");
    }
}
