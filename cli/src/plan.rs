//! `meshbound plan`: a family of meshes from one mesh, or the mesh a target uncertainty needs.
//!
//! ```text
//! meshbound plan --cells 2.4e6 --ratio 1.3 --levels 2            coarser family
//! meshbound plan --cells 2.4e6 --finer --levels 1 --format json   finer family
//! meshbound plan study.yaml --target efficiency=0.2% --target head=0.05
//! ```

use super::Failure;
use crate::output::write_atomic;
use meshbound::plan::{self, Target};
use meshbound::report::format::{num, percent, sig};
use std::path::PathBuf;

/// Options of `plan`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// A study to plan from (with --target); without it, plan a family from --cells.
    pub study: Option<PathBuf>,
    /// Cell count of the mesh to start from.
    #[arg(long, conflicts_with = "study")]
    pub cells: Option<f64>,
    /// Refinement ratio between successive meshes (> 1).
    #[arg(long, default_value_t = 1.3)]
    pub ratio: f64,
    /// How many further meshes.
    #[arg(long, default_value_t = 2)]
    pub levels: u32,
    /// Spatial dimension (default: the study's, else 3).
    #[arg(long)]
    pub dimension: Option<u32>,
    /// Plan finer meshes instead of coarser ones.
    #[arg(long)]
    pub finer: bool,
    /// A target uncertainty, `name=0.2%` (relative) or `name=0.004` (absolute, in the unit).
    #[arg(long, value_name = "NAME=U", requires = "study")]
    pub target: Vec<String>,
    /// Output format.
    #[arg(long, short = 'f', value_enum, default_value_t = PlanFormat::Table)]
    pub format: PlanFormat,
    /// Write to this file instead of standard output.
    #[arg(long, short = 'o', default_value = "-")]
    pub output: PathBuf,
    /// Folders the study may read and write besides its own.
    #[command(flatten)]
    pub reach: crate::reach::Reach,
}

/// Output formats of `plan`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum PlanFormat {
    /// Lines for people.
    Table,
    /// JSON.
    Json,
}

fn parse_target(s: &str) -> Result<(String, Target), String> {
    let (name, v) = s
        .split_once('=')
        .ok_or_else(|| format!("--target `{s}`: write NAME=VALUE, for example efficiency=0.2%"))?;
    let v = v.trim();
    let t = if let Some(p) = v.strip_suffix('%') {
        Target::Relative(
            p.trim()
                .parse::<f64>()
                .map_err(|_| format!("--target `{s}`: `{v}` is not a percentage"))?
                / 100.0,
        )
    } else {
        Target::Absolute(
            v.parse::<f64>()
                .map_err(|_| format!("--target `{s}`: `{v}` is not a number"))?,
        )
    };
    Ok((name.trim().to_string(), t))
}

/// Runs `plan`.
pub fn run(a: Args) -> Result<(), Failure> {
    let bytes = match &a.study {
        None => {
            let cells = a.cells.ok_or_else(|| {
                Failure::Input(
                    "plan needs --cells N (a family) or a study file with --target".into(),
                )
            })?;
            let f = plan::family(cells, a.ratio, a.levels, a.dimension.unwrap_or(3), a.finer)
                .map_err(|e| Failure::Input(e.to_string()))?;
            match a.format {
                PlanFormat::Json => json(&f)?,
                PlanFormat::Table => {
                    let mut s = format!(
                        "{} family, refinement ratio {}, {}-D (cells rounded to whole cells)\n  cells        h (given = 1)   ratio\n",
                        if a.finer { "finer" } else { "coarser" },
                        a.ratio,
                        a.dimension.unwrap_or(3)
                    );
                    for m in &f.meshes {
                        s.push_str(&format!(
                            "  {:<12} {:<15} {}\n",
                            m.cells,
                            sig(m.size, 5),
                            m.ratio.map_or("–".into(), |r| num(r, 5))
                        ));
                    }
                    s.into_bytes()
                }
            }
        }
        Some(path) => {
            if a.target.is_empty() {
                return Err(Failure::Input(
                    "plan STUDY needs at least one --target NAME=U".into(),
                ));
            }
            let study = crate::assess::load(path, &a.reach)?;
            crate::assess::refuse_overwriting_inputs(&a.output, [&study])?;
            let assessment = meshbound::assess::run(&study, &meshbound::sink::Skip)
                .map_err(crate::Failure::from)?;
            let dim = a.dimension.unwrap_or(study.dimension);
            let mut plans = Vec::new();
            for t in &a.target {
                let (name, target) = parse_target(t).map_err(Failure::Input)?;
                plans.push(
                    plan::for_target(&assessment, &name, target, dim)
                        .map_err(|e| Failure::Input(format!("{}: {e}", path.display())))?,
                );
            }
            match a.format {
                PlanFormat::Json => json(
                    &serde_json::json!({ "study": path.display().to_string(), "targets": plans }),
                )?,
                PlanFormat::Table => {
                    let mut s = String::new();
                    for p in &plans {
                        s.push_str(&format!(
                            "{}: target U = {}{} (now {}); with observed order {} ({}),\n  h = {} × h1 = {}{}{}\n",
                            p.quantity,
                            sig(p.target_absolute, 3),
                            p.target_relative.map_or(String::new(), |r| format!(" ({})", percent(r))),
                            sig(p.current_absolute, 3),
                            sig(p.order, 3),
                            match p.method {
                                meshbound::assess::Method::LeastSquares => "least squares",
                                _ => "three-mesh",
                            },
                            sig(p.size_ratio, 4),
                            sig(p.size, 4),
                            p.cells.map_or(String::new(), |c| format!(", about {} cells", sig(c.round(), 4))),
                            if p.already_met { " — the finest mesh already meets the target" } else { "" }
                        ));
                    }
                    s.push_str("planning assumes the observed order holds below the finest mesh: confirm with the new mesh\n");
                    s.into_bytes()
                }
            }
        }
    };
    write_atomic(&a.output, &bytes).map_err(|e| Failure::Output(e.to_string()))
}

fn json<T: serde::Serialize>(v: &T) -> Result<Vec<u8>, Failure> {
    let mut b = serde_json::to_vec_pretty(v).map_err(|e| Failure::Output(e.to_string()))?;
    b.push(b'\n');
    Ok(b)
}
