//! `meshbound water`: a small calculator for the water and machine formulas, for a test rig or
//! for setting inlet boundary conditions: vapour pressure and density at a temperature, and the
//! low-side total pressure that gives a target Thoma number.

use super::Failure;
use crate::output::write_atomic;
use meshbound::machine::{self, STANDARD_GRAVITY};
use meshbound::water;
use serde::Serialize;
use std::path::PathBuf;

/// Options of `water`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// Water temperature, °C.
    #[arg(long, short = 't', allow_negative_numbers = true)]
    pub temperature: f64,
    /// Absolute pressure for the density, Pa (default 101325 Pa, one standard atmosphere).
    #[arg(long, short = 'p')]
    pub pressure: Option<f64>,
    /// Target Thoma number σ = NPSH/H; needs --head.
    #[arg(long, requires = "head")]
    pub sigma: Option<f64>,
    /// Head H of the machine, m; with --sigma.
    #[arg(long, requires = "sigma")]
    pub head: Option<f64>,
    /// Gravity, m/s² (default standard gravity; use the local value of the rig).
    #[arg(long, default_value_t = STANDARD_GRAVITY)]
    pub gravity: f64,
    /// Output format.
    #[arg(long, short = 'f', value_enum, default_value_t = WaterFormat::Table)]
    pub format: WaterFormat,
    /// Write to this file instead of standard output.
    #[arg(long, short = 'o', default_value = "-")]
    pub output: PathBuf,
}

/// Output formats of `water`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum WaterFormat {
    /// Lines for people.
    Table,
    /// JSON.
    Json,
}

/// What `water` computes.
#[derive(Debug, Serialize)]
pub struct WaterAnswer {
    /// Temperature, °C.
    pub temperature: f64,
    /// Saturation (vapour) pressure, Pa (IAPWS-IF97 region 4).
    pub vapour_pressure: f64,
    /// Pressure of the density, Pa.
    pub pressure: f64,
    /// Density, kg/m³ (IAPWS-IF97 region 1).
    pub density: f64,
    /// Gravity used, m/s².
    pub gravity: f64,
    /// The target-σ answer, when asked.
    pub target: Option<Target>,
}

/// The low-side pressure for a target σ.
#[derive(Debug, Serialize)]
pub struct Target {
    /// Target Thoma number.
    pub sigma: f64,
    /// Head, m.
    pub head: f64,
    /// NPSH = σ H, m.
    pub npsh: f64,
    /// Absolute total pressure at the low-pressure side that gives σ, Pa.
    pub low_side_total_pressure: f64,
}

/// Computes the answer.
pub fn answer(a: &Args) -> Result<WaterAnswer, String> {
    let pressure = a.pressure.unwrap_or(101_325.0);
    let pv = water::saturation_pressure_celsius(a.temperature).map_err(|e| e.to_string())?;
    let rho = water::density_celsius(a.temperature, pressure).map_err(|e| e.to_string())?;
    let target = match (a.sigma, a.head) {
        (Some(sigma), Some(head)) => {
            let p =
                machine::low_side_total_pressure_for_sigma(sigma, head, a.temperature, a.gravity)
                    .map_err(|e| e.to_string())?;
            Some(Target {
                sigma,
                head,
                npsh: sigma * head,
                low_side_total_pressure: p,
            })
        }
        _ => None,
    };
    Ok(WaterAnswer {
        temperature: a.temperature,
        vapour_pressure: pv,
        pressure,
        density: rho,
        gravity: a.gravity,
        target,
    })
}

fn text(w: &WaterAnswer) -> String {
    use meshbound::report::format::sig;
    let mut s = format!(
        "water at {} °C (IAPWS-IF97)\n  vapour pressure p_v   {} Pa\n  density ρ             {} kg/m³ at {} Pa\n",
        w.temperature,
        sig(w.vapour_pressure, 6),
        sig(w.density, 7),
        sig(w.pressure, 6)
    );
    if let Some(t) = &w.target {
        s.push_str(&format!(
            "target σ = {} at H = {} m (g = {} m/s²)\n  NPSH = σ H             {} m\n  low-side total pressure {} Pa absolute\n",
            t.sigma,
            t.head,
            w.gravity,
            sig(t.npsh, 6),
            sig(t.low_side_total_pressure, 7)
        ));
        s.push_str(
            "  (the inlet in pump mode, the outlet in turbine mode; ρ taken at that pressure)\n",
        );
    }
    s
}

/// Runs `water`.
pub fn run(a: Args) -> Result<(), Failure> {
    let w = answer(&a).map_err(Failure::Input)?;
    let bytes = match a.format {
        WaterFormat::Table => text(&w).into_bytes(),
        WaterFormat::Json => {
            let mut v =
                serde_json::to_vec_pretty(&w).map_err(|e| Failure::Output(e.to_string()))?;
            v.push(b'\n');
            v
        }
    };
    write_atomic(&a.output, &bytes).map_err(|e| Failure::Output(e.to_string()))
}
