//! `meshbound draft PATH`: write a commented study file to begin from. Refuses to overwrite.

use super::Failure;
use std::io::Write;
use std::path::PathBuf;

/// Options of `draft`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// Where to write the new study file.
    pub path: PathBuf,
}

/// The commented starter study. It runs as it is (with placeholder numbers).
pub const STARTER: &str = r#"# A meshbound study file. Replace the placeholder numbers with your results, then run
#   meshbound assess THIS_FILE
# Keys are described in docs/study-file.md; `meshbound schema` gives a JSON Schema for editors.
format: 1
title: My refinement study        # shown in every output
dimension: 3                      # 1, 2 or 3: for h from cell counts
formal_order: 2                   # order of the discretisation scheme

# At least three meshes of one family, in any order (sorted finest first). Give `cells` for
# every mesh (h relative to the finest), or `size` (absolute h), or `extent` with `cells`
# (domain volume or area: h = (extent/cells)^(1/dimension)). Keep ratios above 1.3.
meshes:
  - name: fine
    cells: 4.0e6
    # y_plus: 45                  # mean wall y+ (checked against the wall-function range)
    # iterative: 1.0e-5           # iterative uncertainty of the results, absolute
  - name: medium
    cells: 1.6e6
  - name: coarse
    cells: 6.4e5

# One value per mesh for each quantity.
quantities:
  efficiency:
    unit: "-"
    values: {fine: 0.9012, medium: 0.8991, coarse: 0.8950}

# Cavitation sweeps: curves per mesh, inline or as CSV files beside this study.
# sweeps:
#   cavitation:
#     x: sigma
#     responses: [efficiency]
#     data:
#       fine: {file: sweeps/fine.csv}       # header row: sigma,efficiency
#       medium: {file: sweeps/medium.csv}
#       coarse: {file: sweeps/coarse.csv}
#     breakdown:
#       - {response: efficiency, drop: 1%, reference: plateau, plateau_from: 0.3}
#     band: {response: efficiency, at: fine}

settings:
  safety_factor: 1.25             # of the three-mesh GCI
  estimator: auto                 # auto: least squares from four meshes on

# Limits that `meshbound gate` checks (exit 1 when one fails).
acceptance:
  - target: efficiency
    max_relative: 1%
    require: monotonic
"#;

/// Runs `draft`.
pub fn run(a: Args) -> Result<(), Failure> {
    let mut f = std::fs::OpenOptions::new()
        .write(true)
        .create_new(true)
        .open(&a.path)
        .map_err(|e| {
            if e.kind() == std::io::ErrorKind::AlreadyExists {
                Failure::Input(format!(
                    "{}: the file exists; meshbound draft does not overwrite files",
                    a.path.display()
                ))
            } else {
                Failure::Output(format!("cannot write {}: {e}", a.path.display()))
            }
        })?;
    if let Err(e) = f.write_all(STARTER.as_bytes()).and_then(|_| f.sync_all()) {
        let _ = std::fs::remove_file(&a.path);
        return Err(Failure::Output(format!(
            "cannot write {}: {e}",
            a.path.display()
        )));
    }
    eprintln!(
        "wrote {}: edit it, then run `meshbound assess {}`",
        a.path.display(),
        a.path.display()
    );
    Ok(())
}
