//! Hydraulic machine quantities: head, hydraulic efficiency, NPSH and the Thoma number.
//!
//! Pure functions, SI units throughout: pressure in Pa (absolute where the text says so), flow
//! in m³/s, torque in N·m, rotational speed in revolutions per minute \[rpm\], head and NPSH in
//! metres of water column \[m\], density in kg/m³, gravity in m/s². Temperatures are in °C
//! (the water properties come from [`crate::water`], IAPWS-IF97).
//!
//! Formulas (method notes §6 and §8):
//! - angular speed ω = 2π n / 60;
//! - pump mode: H = (p_t,out − p_t,in) / (ρ g), η_h = ρ g Q H / (M ω);
//! - turbine mode: H = (p_t,in − p_t,out) / (ρ g), η_h = M ω / (ρ g Q H);
//! - available NPSH from an absolute total pressure: NPSH = (p_t − p_v) / (ρ g);
//!   from an absolute static pressure: NPSH = (p − p_v) / (ρ g) + v² / (2 g), v = Q / A;
//! - Thoma cavitation number σ = NPSH / H.
//!
//! **Which pressure the NPSH and the density use.** Cavitation is referred to the machine's
//! low-pressure side: the inlet of a pump, the outlet (draft tube) of a turbine. In
//! [`derive_point`] the NPSH is taken at that side's absolute total pressure
//! ([`Mode::low_side_pressure`]), and the density ρ (used for the head, the efficiency and
//! the NPSH alike) is IAPWS-IF97 region 1 at the water temperature and that same pressure.
//! In pump mode this is the inlet total pressure. Using the lowest pressure in the machine
//! also makes the saturation check of region 1 the meaningful one: a low side above the
//! vapour pressure implies liquid everywhere. (The difference in density between the two
//! sides is about 5e-4 relative per MPa of pressure rise; elevation terms are not included.)
//!
//! **Signs.** Flow, torque and speed are magnitudes, positive in the machine's operating
//! direction for the given [`Mode`]; zero or negative values are refused, as are heads that
//! are not positive. No function here returns NaN or infinity: such a result is an error.

use crate::water::{self, WaterError};
use serde::{Deserialize, Serialize};
use std::f64::consts::PI;
use std::fmt;

/// Standard acceleration of gravity, 9.80665 m/s² (3rd CGPM, 1901). Acceptance tests use
/// local gravity, so every function here takes gravity as a parameter.
pub const STANDARD_GRAVITY: f64 = 9.80665;

/// Operating mode of the machine.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize, schemars::JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum Mode {
    /// The machine adds energy to the water: outlet total pressure above inlet.
    Pump,
    /// The machine takes energy from the water: inlet total pressure above outlet.
    Turbine,
}

impl Mode {
    /// The snake_case label used in every output (`pump`, `turbine`).
    pub fn label(self) -> &'static str {
        match self {
            Mode::Pump => "pump",
            Mode::Turbine => "turbine",
        }
    }

    /// Of the inlet and outlet total pressures, the one on the low-pressure side, where NPSH
    /// is referred: the inlet in pump mode, the outlet in turbine mode.
    pub fn low_side_pressure(self, inlet_total_pressure: f64, outlet_total_pressure: f64) -> f64 {
        match self {
            Mode::Pump => inlet_total_pressure,
            Mode::Turbine => outlet_total_pressure,
        }
    }
}

impl fmt::Display for Mode {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.label())
    }
}

/// Why a machine quantity could not be computed.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum MachineError {
    /// An input was NaN or infinite.
    #[error("{quantity} {value} {unit} is not a finite number")]
    NotFinite {
        /// What the value is (for example "flow").
        quantity: &'static str,
        /// The value as given.
        value: f64,
        /// Its unit.
        unit: &'static str,
    },
    /// An input that must be greater than zero was zero or negative.
    #[error(
        "{quantity} {value} {unit} must be greater than zero \
         (give magnitudes, positive in the machine's operating direction)"
    )]
    NotPositive {
        /// What the value is (for example "torque").
        quantity: &'static str,
        /// The value as given.
        value: f64,
        /// Its unit.
        unit: &'static str,
    },
    /// The head is zero or negative for the mode given.
    #[error(
        "head {head} m is not positive in {mode} mode: a pump needs the outlet total \
         pressure above the inlet's, a turbine the inlet's above the outlet's \
         (is the mode right?)"
    )]
    NonPositiveHead {
        /// The head computed or given \[m\].
        head: f64,
        /// The mode.
        mode: Mode,
    },
    /// The available NPSH is negative: the pressure is below the vapour pressure.
    #[error(
        "NPSH {npsh} m is negative: the absolute pressure {pressure} Pa is too far below \
         the vapour pressure {vapour_pressure} Pa (the water would boil there)"
    )]
    NegativeNpsh {
        /// The NPSH computed \[m\].
        npsh: f64,
        /// The absolute pressure given \[Pa\].
        pressure: f64,
        /// The vapour pressure \[Pa\].
        vapour_pressure: f64,
    },
    /// A target Thoma number was negative.
    #[error("Thoma number {sigma} is negative: it must be zero or greater")]
    NegativeSigma {
        /// The value given.
        sigma: f64,
    },
    /// A result overflowed or was otherwise not a finite number.
    #[error(
        "{quantity} came out as {value}, not a finite number: check the magnitudes of the inputs"
    )]
    NonFiniteResult {
        /// What was being computed.
        quantity: &'static str,
        /// The value obtained.
        value: f64,
    },
    /// The pressure for a target Thoma number could not be found.
    #[error("no pressure found for Thoma number {sigma} at head {head} m: {reason}")]
    NoSolution {
        /// The target.
        sigma: f64,
        /// The head \[m\].
        head: f64,
        /// Why.
        reason: String,
    },
    /// A water property could not be computed (see [`WaterError`]).
    #[error("water properties: {0}")]
    Water(#[from] WaterError),
}

fn finite(quantity: &'static str, value: f64, unit: &'static str) -> Result<f64, MachineError> {
    if value.is_finite() {
        Ok(value)
    } else {
        Err(MachineError::NotFinite {
            quantity,
            value,
            unit,
        })
    }
}

fn positive(quantity: &'static str, value: f64, unit: &'static str) -> Result<f64, MachineError> {
    finite(quantity, value, unit)?;
    if value > 0.0 {
        Ok(value)
    } else {
        Err(MachineError::NotPositive {
            quantity,
            value,
            unit,
        })
    }
}

fn result(quantity: &'static str, value: f64) -> Result<f64, MachineError> {
    if value.is_finite() {
        Ok(value)
    } else {
        Err(MachineError::NonFiniteResult { quantity, value })
    }
}

fn positive_head(head: f64, mode: Mode) -> Result<f64, MachineError> {
    finite("head", head, "m")?;
    if head > 0.0 {
        Ok(head)
    } else {
        Err(MachineError::NonPositiveHead { head, mode })
    }
}

/// Angular speed ω = 2π n / 60 \[rad/s\] from a rotational speed n \[rpm\].
pub fn angular_speed(speed_rpm: f64) -> f64 {
    2.0 * PI * speed_rpm / 60.0
}

/// Head H \[m\] from the inlet and outlet total pressures \[Pa\], the density \[kg/m³\] and
/// gravity \[m/s²\]: pump H = (p_t,out − p_t,in)/(ρ g), turbine H = (p_t,in − p_t,out)/(ρ g).
///
/// Refuses a head that is not positive ([`MachineError::NonPositiveHead`]).
pub fn head(
    mode: Mode,
    inlet_total_pressure: f64,
    outlet_total_pressure: f64,
    density: f64,
    gravity: f64,
) -> Result<f64, MachineError> {
    finite("inlet total pressure", inlet_total_pressure, "Pa")?;
    finite("outlet total pressure", outlet_total_pressure, "Pa")?;
    positive("density", density, "kg/m³")?;
    positive("gravity", gravity, "m/s²")?;
    let rise = match mode {
        Mode::Pump => outlet_total_pressure - inlet_total_pressure,
        Mode::Turbine => inlet_total_pressure - outlet_total_pressure,
    };
    let h = result("head", rise / (density * gravity))?;
    positive_head(h, mode)
}

/// Hydraulic efficiency η_h \[-\]: pump ρ g Q H / (M ω), turbine M ω / (ρ g Q H), with
/// ω = 2π n / 60.
///
/// Inputs: density \[kg/m³\], gravity \[m/s²\], flow Q \[m³/s\], head H \[m\], torque M
/// \[N·m\], speed n \[rpm\]; all must be greater than zero. The efficiency is not capped at 1:
/// a value above 1 is returned as it is (it points at inconsistent inputs).
pub fn hydraulic_efficiency(
    mode: Mode,
    density: f64,
    gravity: f64,
    flow: f64,
    head: f64,
    torque: f64,
    speed_rpm: f64,
) -> Result<f64, MachineError> {
    positive("density", density, "kg/m³")?;
    positive("gravity", gravity, "m/s²")?;
    positive("flow", flow, "m³/s")?;
    positive_head(head, mode)?;
    positive("torque", torque, "N·m")?;
    positive("speed", speed_rpm, "rpm")?;
    let hydraulic_power = result("hydraulic power", density * gravity * flow * head)?;
    let shaft_power = result("shaft power", torque * angular_speed(speed_rpm))?;
    let eta = match mode {
        Mode::Pump => hydraulic_power / shaft_power,
        Mode::Turbine => shaft_power / hydraulic_power,
    };
    result("efficiency", eta)
}

/// Available NPSH \[m\] from an absolute **total** pressure \[Pa\]: (p_t − p_v) / (ρ g).
///
/// Refuses a negative result ([`MachineError::NegativeNpsh`]); zero is allowed.
pub fn npsh_from_total_pressure(
    total_pressure: f64,
    vapour_pressure: f64,
    density: f64,
    gravity: f64,
) -> Result<f64, MachineError> {
    finite("total pressure", total_pressure, "Pa")?;
    finite("vapour pressure", vapour_pressure, "Pa")?;
    positive("density", density, "kg/m³")?;
    positive("gravity", gravity, "m/s²")?;
    let npsh = result(
        "NPSH",
        (total_pressure - vapour_pressure) / (density * gravity),
    )?;
    non_negative_npsh(npsh, total_pressure, vapour_pressure)
}

/// Available NPSH \[m\] from an absolute **static** pressure \[Pa\]:
/// (p − p_v) / (ρ g) + v² / (2 g), with the mean velocity v = Q / A from the flow Q \[m³/s\]
/// and the flow area A \[m²\] of the section where p is taken.
///
/// The flow may have either sign (only v² enters); the area must be greater than zero.
/// Refuses a negative result ([`MachineError::NegativeNpsh`]).
pub fn npsh_from_static_pressure(
    static_pressure: f64,
    vapour_pressure: f64,
    density: f64,
    gravity: f64,
    flow: f64,
    area: f64,
) -> Result<f64, MachineError> {
    finite("static pressure", static_pressure, "Pa")?;
    finite("vapour pressure", vapour_pressure, "Pa")?;
    positive("density", density, "kg/m³")?;
    positive("gravity", gravity, "m/s²")?;
    finite("flow", flow, "m³/s")?;
    positive("area", area, "m²")?;
    let v = result("velocity", flow / area)?;
    let npsh = result(
        "NPSH",
        (static_pressure - vapour_pressure) / (density * gravity) + v * v / (2.0 * gravity),
    )?;
    non_negative_npsh(npsh, static_pressure, vapour_pressure)
}

fn non_negative_npsh(npsh: f64, pressure: f64, vapour_pressure: f64) -> Result<f64, MachineError> {
    if npsh >= 0.0 {
        Ok(npsh)
    } else {
        Err(MachineError::NegativeNpsh {
            npsh,
            pressure,
            vapour_pressure,
        })
    }
}

/// Thoma cavitation number σ = NPSH / H \[-\].
///
/// The NPSH must be zero or greater and the head greater than zero.
pub fn thoma_sigma(npsh: f64, head: f64) -> Result<f64, MachineError> {
    finite("NPSH", npsh, "m")?;
    positive("head", head, "m")?;
    if npsh < 0.0 {
        return Err(MachineError::NegativeSigma { sigma: npsh / head });
    }
    result("Thoma number", npsh / head)
}

/// The absolute total pressure \[Pa\] on the low-pressure side (pump inlet, turbine outlet)
/// that gives the Thoma number `sigma` at head `head` \[m\], water temperature
/// `temperature_celsius` \[°C\] and gravity `gravity` \[m/s²\]:
/// p = σ H ρ g + p_v, with p_v = p_s(t) and ρ from IAPWS-IF97 region 1.
///
/// As in [`derive_point`], ρ is taken at (t, p) itself, so the equation is solved as a
/// fixed point p ← σ H ρ(t, p) g + p_v (it contracts by a factor (p − p_v)·κ, with κ the
/// compressibility of water, about 5e-10 per Pa, and converges in a few steps). Feeding the
/// result back through [`npsh_from_total_pressure`] and [`thoma_sigma`] with ρ(t, p)
/// recovers `sigma`.
pub fn low_side_total_pressure_for_sigma(
    sigma: f64,
    head: f64,
    temperature_celsius: f64,
    gravity: f64,
) -> Result<f64, MachineError> {
    finite("Thoma number", sigma, "-")?;
    if sigma < 0.0 {
        return Err(MachineError::NegativeSigma { sigma });
    }
    positive("head", head, "m")?;
    finite("temperature", temperature_celsius, "°C")?;
    positive("gravity", gravity, "m/s²")?;
    let p_v = water::saturation_pressure_celsius(temperature_celsius)?;
    let lift = result("σ H g", sigma * head * gravity)?;
    let mut p = p_v;
    for _ in 0..200 {
        let rho = water::density_celsius(temperature_celsius, p)?;
        let next = result("pressure", lift * rho + p_v)?;
        if (next - p).abs() <= 1e-15 * next.abs() {
            return Ok(next);
        }
        p = next;
    }
    Err(MachineError::NoSolution {
        sigma,
        head,
        reason: "the fixed-point iteration did not settle in 200 steps".to_string(),
    })
}

/// One raw operating point as a solver reports it.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct RawPoint {
    /// Total pressure at the machine inlet \[Pa, absolute\].
    pub inlet_total_pressure: f64,
    /// Total pressure at the machine outlet \[Pa, absolute\].
    pub outlet_total_pressure: f64,
    /// Volume flow \[m³/s\], positive.
    pub flow: f64,
    /// Torque on the runner or impeller \[N·m\], positive.
    pub torque: f64,
    /// Rotational speed \[rpm\], positive.
    pub speed: f64,
    /// Water temperature \[°C\].
    pub temperature: f64,
}

/// The quantities derived from one [`RawPoint`], with the water properties used.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct DerivedPoint {
    /// Head H \[m\].
    pub head: f64,
    /// Hydraulic efficiency η_h \[-\].
    pub efficiency: f64,
    /// Available NPSH at the low-pressure side \[m\].
    pub npsh: f64,
    /// Thoma cavitation number σ = NPSH / H \[-\].
    pub sigma: f64,
    /// Vapour pressure p_v = p_s(t) \[Pa\].
    pub vapour_pressure: f64,
    /// Density ρ \[kg/m³\] used for head, efficiency and NPSH.
    pub density: f64,
    /// The absolute total pressure \[Pa\] at which the NPSH and the density were taken
    /// (pump: inlet; turbine: outlet).
    pub low_side_pressure: f64,
}

/// Computes head, hydraulic efficiency, NPSH and Thoma number for one raw point.
///
/// The vapour pressure is p_s(t) (IAPWS-IF97 region 4). The density is IAPWS-IF97 region 1
/// at the water temperature and the low-pressure side's absolute total pressure (the inlet
/// total pressure in pump mode, the outlet total pressure in turbine mode); the NPSH is taken
/// at that same pressure. See the module documentation for why.
pub fn derive_point(
    point: &RawPoint,
    mode: Mode,
    gravity: f64,
) -> Result<DerivedPoint, MachineError> {
    finite("inlet total pressure", point.inlet_total_pressure, "Pa")?;
    finite("outlet total pressure", point.outlet_total_pressure, "Pa")?;
    positive("flow", point.flow, "m³/s")?;
    positive("torque", point.torque, "N·m")?;
    positive("speed", point.speed, "rpm")?;
    finite("temperature", point.temperature, "°C")?;
    positive("gravity", gravity, "m/s²")?;

    let low = mode.low_side_pressure(point.inlet_total_pressure, point.outlet_total_pressure);
    let vapour_pressure = water::saturation_pressure_celsius(point.temperature)?;
    let density = water::density_celsius(point.temperature, low)?;
    let head = head(
        mode,
        point.inlet_total_pressure,
        point.outlet_total_pressure,
        density,
        gravity,
    )?;
    let efficiency = hydraulic_efficiency(
        mode,
        density,
        gravity,
        point.flow,
        head,
        point.torque,
        point.speed,
    )?;
    let npsh = npsh_from_total_pressure(low, vapour_pressure, density, gravity)?;
    let sigma = thoma_sigma(npsh, head)?;
    Ok(DerivedPoint {
        head,
        efficiency,
        npsh,
        sigma,
        vapour_pressure,
        density,
        low_side_pressure: low,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;
    use proptest::prelude::*;

    const TIGHT: f64 = 1e-12;

    #[test]
    fn standard_gravity_value() {
        // 3rd CGPM (1901): standard acceleration of gravity 9.80665 m/s².
        assert_relative_eq!(STANDARD_GRAVITY, 9.80665, max_relative = 0.0);
    }

    #[test]
    fn mode_serde_snake_case() {
        assert_eq!(serde_json::to_string(&Mode::Pump).unwrap(), "\"pump\"");
        assert_eq!(
            serde_json::to_string(&Mode::Turbine).unwrap(),
            "\"turbine\""
        );
        assert_eq!(
            serde_json::from_str::<Mode>("\"turbine\"").unwrap(),
            Mode::Turbine
        );
        assert_eq!(
            serde_json::from_str::<Mode>("\"pump\"").unwrap(),
            Mode::Pump
        );
        assert!(serde_json::from_str::<Mode>("\"Pump\"").is_err());
    }

    #[test]
    fn angular_speed_hand_worked() {
        // Hand calculation from ω = 2π n / 60 (method notes §8): n = 1500 rpm →
        // ω = 2π·1500/60 = 50π = 157.07963267948966 rad/s.
        assert_relative_eq!(angular_speed(1500.0), 50.0 * PI, max_relative = TIGHT);
    }

    #[test]
    fn pump_hand_worked() {
        // Invented round inputs; the expected values are my hand calculation from the
        // formulas of method notes §6 and §8 (ρ and g chosen round so the arithmetic is exact):
        //   ρ = 1000 kg/m³, g = 10 m/s² → ρ g = 10 000 Pa/m
        //   p_t,in = 200 000 Pa, p_t,out = 700 000 Pa
        //   H = (700 000 − 200 000) / 10 000 = 50 m
        //   Q = 0.2 m³/s, M = 1000 N·m, n = 1500 rpm → ω = 50π rad/s
        //   ρ g Q H = 10 000 · 0.2 · 50 = 100 000 W;  M ω = 1000 · 50π = 50 000π W
        //   η_h = 100 000 / (50 000π) = 2/π = 0.636 619 772 …
        //   p_v = 2000 Pa: NPSH = (200 000 − 2000) / 10 000 = 19.8 m;  σ = 19.8 / 50 = 0.396
        //   static p = 190 000 Pa, A = 0.04 m² → v = 0.2/0.04 = 5 m/s, v²/(2g) = 25/20 = 1.25 m
        //   NPSH_static = (190 000 − 2000)/10 000 + 1.25 = 18.8 + 1.25 = 20.05 m
        let h = head(Mode::Pump, 200_000.0, 700_000.0, 1000.0, 10.0).unwrap();
        assert_relative_eq!(h, 50.0, max_relative = TIGHT);
        let eta = hydraulic_efficiency(Mode::Pump, 1000.0, 10.0, 0.2, h, 1000.0, 1500.0).unwrap();
        assert_relative_eq!(eta, 2.0 / PI, max_relative = TIGHT);
        let npsh = npsh_from_total_pressure(200_000.0, 2000.0, 1000.0, 10.0).unwrap();
        assert_relative_eq!(npsh, 19.8, max_relative = TIGHT);
        assert_relative_eq!(thoma_sigma(npsh, h).unwrap(), 0.396, max_relative = TIGHT);
        let npsh_s = npsh_from_static_pressure(190_000.0, 2000.0, 1000.0, 10.0, 0.2, 0.04).unwrap();
        assert_relative_eq!(npsh_s, 20.05, max_relative = TIGHT);
    }

    #[test]
    fn turbine_hand_worked() {
        // Invented round inputs; the expected values are my hand calculation from the
        // formulas of method notes §6 and §8:
        //   ρ = 1000 kg/m³, g = 10 m/s² → ρ g = 10 000 Pa/m
        //   p_t,in = 1 200 000 Pa, p_t,out = 200 000 Pa
        //   H = (1 200 000 − 200 000) / 10 000 = 100 m
        //   Q = 1 m³/s → ρ g Q H = 10 000 · 1 · 100 = 1 000 000 W
        //   n = 600 rpm → ω = 2π·600/60 = 20π rad/s;  M = 12 000 N·m → M ω = 240 000π W
        //   η_h = 240 000π / 1 000 000 = 0.24π = 0.753 982 236 …
        //   NPSH at the low-pressure side (turbine outlet), p_v = 2000 Pa:
        //   NPSH = (200 000 − 2000) / 10 000 = 19.8 m;  σ = 19.8 / 100 = 0.198
        let h = head(Mode::Turbine, 1_200_000.0, 200_000.0, 1000.0, 10.0).unwrap();
        assert_relative_eq!(h, 100.0, max_relative = TIGHT);
        let eta =
            hydraulic_efficiency(Mode::Turbine, 1000.0, 10.0, 1.0, h, 12_000.0, 600.0).unwrap();
        assert_relative_eq!(eta, 0.24 * PI, max_relative = TIGHT);
        let low = Mode::Turbine.low_side_pressure(1_200_000.0, 200_000.0);
        assert_relative_eq!(low, 200_000.0, max_relative = 0.0);
        let npsh = npsh_from_total_pressure(low, 2000.0, 1000.0, 10.0).unwrap();
        assert_relative_eq!(npsh, 19.8, max_relative = TIGHT);
        assert_relative_eq!(thoma_sigma(npsh, h).unwrap(), 0.198, max_relative = TIGHT);
    }

    #[test]
    fn inverse_hand_worked() {
        // p = σ H ρ g + p_v (method notes §6 rearranged). With the IF97 ρ and p_v at 20 °C:
        // σ = 0.396, H = 50 m, g = 10 m/s² → p = 0.396·50·10·ρ + p_v = 198 ρ + p_v.
        let p = low_side_total_pressure_for_sigma(0.396, 50.0, 20.0, 10.0).unwrap();
        let rho = water::density_celsius(20.0, p).unwrap();
        let pv = water::saturation_pressure_celsius(20.0).unwrap();
        assert_relative_eq!(p, 198.0 * rho + pv, max_relative = TIGHT);
        // Plausibility (common tables): ρ(20 °C) ≈ 998.2 kg/m³, p_v(20 °C) ≈ 2339 Pa,
        // so p ≈ 198 · 998.2 + 2339 ≈ 199 983 Pa.
        assert_relative_eq!(p, 199_983.0, max_relative = 1e-4);
        // σ = 0 puts the low side exactly at the vapour pressure.
        let p0 = low_side_total_pressure_for_sigma(0.0, 50.0, 20.0, 10.0).unwrap();
        assert_relative_eq!(p0, pv, max_relative = TIGHT);
    }

    #[test]
    fn derive_pump_point() {
        // Pump at 20 °C. Expected values follow the formulas with the IF97 density at the
        // inlet total pressure and p_v(20 °C); the density is checked against the common
        // table value ρ(20 °C, ~0.1 MPa) ≈ 998.2 kg/m³.
        let raw = RawPoint {
            inlet_total_pressure: 150_000.0,
            outlet_total_pressure: 650_000.0,
            flow: 0.2,
            torque: 1000.0,
            speed: 1500.0,
            temperature: 20.0,
        };
        let g = STANDARD_GRAVITY;
        let d = derive_point(&raw, Mode::Pump, g).unwrap();
        let rho = water::density_celsius(20.0, 150_000.0).unwrap();
        let pv = water::saturation_pressure_celsius(20.0).unwrap();
        assert_relative_eq!(d.density, rho, max_relative = 0.0);
        assert_relative_eq!(d.vapour_pressure, pv, max_relative = 0.0);
        assert_relative_eq!(d.low_side_pressure, 150_000.0, max_relative = 0.0);
        assert_relative_eq!(d.density, 998.2, max_relative = 1e-4);
        // H = 500 000 / (ρ g) ≈ 500 000 / (998.2 · 9.80665) ≈ 51.08 m
        assert_relative_eq!(d.head, 500_000.0 / (rho * g), max_relative = TIGHT);
        assert_relative_eq!(d.head, 51.08, max_relative = 1e-3);
        // η = ρ g Q H / (M ω) = 500 000 · 0.2 / (1000 · 50π) = 2/π: ρ g cancels.
        assert_relative_eq!(d.efficiency, 2.0 / PI, max_relative = TIGHT);
        assert_relative_eq!(d.npsh, (150_000.0 - pv) / (rho * g), max_relative = TIGHT);
        // σ = (p_in − p_v) / (p_out − p_in): ρ g cancels.
        assert_relative_eq!(d.sigma, (150_000.0 - pv) / 500_000.0, max_relative = TIGHT);
    }

    #[test]
    fn derive_turbine_point() {
        // Turbine at 10 °C: the low side is the outlet, so ρ and NPSH are taken there.
        let raw = RawPoint {
            inlet_total_pressure: 1_200_000.0,
            outlet_total_pressure: 200_000.0,
            flow: 1.0,
            torque: 12_000.0,
            speed: 600.0,
            temperature: 10.0,
        };
        let g = 9.81;
        let d = derive_point(&raw, Mode::Turbine, g).unwrap();
        let rho = water::density_celsius(10.0, 200_000.0).unwrap();
        let pv = water::saturation_pressure_celsius(10.0).unwrap();
        assert_relative_eq!(d.density, rho, max_relative = 0.0);
        assert_relative_eq!(d.low_side_pressure, 200_000.0, max_relative = 0.0);
        // ρ(10 °C) ≈ 999.7 kg/m³, p_v(10 °C) ≈ 1228 Pa (common tables).
        assert_relative_eq!(d.density, 999.7, max_relative = 1e-4);
        assert_relative_eq!(d.vapour_pressure, 1228.0, max_relative = 1e-3);
        assert_relative_eq!(d.head, 1_000_000.0 / (rho * g), max_relative = TIGHT);
        // η = M ω / (Q Δp) = 12 000 · 20π / (1 · 1 000 000) = 0.24π: ρ g cancels.
        assert_relative_eq!(d.efficiency, 0.24 * PI, max_relative = TIGHT);
        assert_relative_eq!(d.npsh, (200_000.0 - pv) / (rho * g), max_relative = TIGHT);
        assert_relative_eq!(
            d.sigma,
            (200_000.0 - pv) / 1_000_000.0,
            max_relative = TIGHT
        );
    }

    fn pump_raw() -> RawPoint {
        RawPoint {
            inlet_total_pressure: 150_000.0,
            outlet_total_pressure: 650_000.0,
            flow: 0.2,
            torque: 1000.0,
            speed: 1500.0,
            temperature: 20.0,
        }
    }

    #[test]
    fn non_positive_head_refused() {
        // The pump point run as a turbine has a negative head.
        let err = derive_point(&pump_raw(), Mode::Turbine, STANDARD_GRAVITY).unwrap_err();
        assert!(matches!(err, MachineError::NonPositiveHead { .. }), "{err}");
        assert!(err.to_string().contains("turbine mode"), "{err}");
        let err = head(Mode::Pump, 1e5, 1e5, 1000.0, 9.81).unwrap_err();
        assert!(matches!(err, MachineError::NonPositiveHead { .. }), "{err}");
        assert!(thoma_sigma(1.0, 0.0).is_err());
        assert!(hydraulic_efficiency(Mode::Pump, 1000.0, 9.81, 1.0, -1.0, 1.0, 1.0).is_err());
    }

    #[test]
    fn zero_flow_torque_speed_refused() {
        for (field, expect) in [
            ("flow", "flow 0"),
            ("torque", "torque 0"),
            ("speed", "speed 0"),
        ] {
            let mut raw = pump_raw();
            match field {
                "flow" => raw.flow = 0.0,
                "torque" => raw.torque = 0.0,
                _ => raw.speed = 0.0,
            }
            let err = derive_point(&raw, Mode::Pump, STANDARD_GRAVITY).unwrap_err();
            assert!(matches!(err, MachineError::NotPositive { .. }), "{err}");
            assert!(err.to_string().contains(expect), "{err}");
        }
        let mut raw = pump_raw();
        raw.torque = -5.0;
        assert!(derive_point(&raw, Mode::Pump, STANDARD_GRAVITY).is_err());
        assert!(derive_point(&pump_raw(), Mode::Pump, 0.0).is_err());
        assert!(npsh_from_static_pressure(1e5, 2e3, 1e3, 9.81, 0.1, 0.0).is_err());
    }

    #[test]
    fn non_finite_refused_never_returned() {
        let mut raw = pump_raw();
        raw.inlet_total_pressure = f64::NAN;
        assert!(matches!(
            derive_point(&raw, Mode::Pump, STANDARD_GRAVITY),
            Err(MachineError::NotFinite { .. })
        ));
        let mut raw = pump_raw();
        raw.temperature = f64::INFINITY;
        assert!(derive_point(&raw, Mode::Pump, STANDARD_GRAVITY).is_err());
        assert!(derive_point(&pump_raw(), Mode::Pump, f64::NAN).is_err());
        // Overflowing products are reported, not returned as infinity.
        let err = hydraulic_efficiency(Mode::Pump, 1e300, 9.81, 1e300, 1.0, 1.0, 1.0).unwrap_err();
        assert!(matches!(err, MachineError::NonFiniteResult { .. }), "{err}");
        let err = head(Mode::Pump, -1e308, 1e308, 1e-10, 1e-10).unwrap_err();
        assert!(matches!(err, MachineError::NonFiniteResult { .. }), "{err}");
    }

    #[test]
    fn low_side_below_vapour_pressure_refused() {
        // 1000 Pa at 20 °C is below p_v ≈ 2339 Pa: vapour, refused by the water module.
        let mut raw = pump_raw();
        raw.inlet_total_pressure = 1000.0;
        raw.outlet_total_pressure = 501_000.0;
        let err = derive_point(&raw, Mode::Pump, STANDARD_GRAVITY).unwrap_err();
        assert!(
            matches!(err, MachineError::Water(WaterError::BelowSaturation { .. })),
            "{err}"
        );
        let err = npsh_from_total_pressure(1000.0, 2339.0, 998.0, 9.81).unwrap_err();
        assert!(matches!(err, MachineError::NegativeNpsh { .. }), "{err}");
        assert!(low_side_total_pressure_for_sigma(-0.1, 50.0, 20.0, 9.81).is_err());
        assert!(low_side_total_pressure_for_sigma(0.1, 50.0, 400.0, 9.81).is_err());
    }

    proptest! {
        #[test]
        fn inverse_then_forward_recovers_sigma(
            sigma in 0.0f64..3.0,
            head_m in 1.0f64..300.0,
            t in 0.0f64..150.0,
            g in 9.78f64..9.84,
        ) {
            let p = low_side_total_pressure_for_sigma(sigma, head_m, t, g).unwrap();
            let rho = water::density_celsius(t, p).unwrap();
            let pv = water::saturation_pressure_celsius(t).unwrap();
            let npsh = npsh_from_total_pressure(p, pv, rho, g).unwrap();
            let back = thoma_sigma(npsh, head_m).unwrap();
            prop_assert!((back - sigma).abs() <= 1e-12 + 1e-10 * sigma,
                "sigma {sigma} -> p {p} -> {back}");

            // The same through derive_point: a pump whose outlet is H ρ g above the inlet.
            let raw = RawPoint {
                inlet_total_pressure: p,
                outlet_total_pressure: p + head_m * rho * g,
                flow: 0.5,
                torque: 2000.0,
                speed: 1000.0,
                temperature: t,
            };
            let d = derive_point(&raw, Mode::Pump, g).unwrap();
            prop_assert!((d.head - head_m).abs() <= 1e-9 * head_m);
            prop_assert!((d.sigma - sigma).abs() <= 1e-9 * (1.0 + sigma),
                "derive: sigma {sigma} -> {}", d.sigma);
        }
    }
}
