//! Values that mix percent and fractions: one efficiency typed as 83.31 among 0.83s.
//!
//! [`mixed_scale`] looks at the values of one quantity (its values on every mesh, or every
//! point of one sweep column on every mesh) and says whether some of them look like fractions
//! and others like the same thing in percent. It is a pure function; the study reader turns
//! its answer into a refusal naming the file, key path, line and column.
//!
//! **The rule** (a project decision; common practice, no source). Zeros are left out (0 % is
//! 0). The check runs only when every other value has one sign and no magnitude exceeds 100 (a
//! percentage of a fraction never does). The magnitudes split at 1 into a *low* group, in
//! (0, 1], and a *high* group, in (1, 100]. Both groups must be present and
//!
//! 1. **a gap of a decade**: the smallest high magnitude is at least 10 times the largest low
//!    one — no value lies in between, as none would if some values were written in percent
//!    and the others as fractions of the same thing;
//! 2. **the high group, divided by 100, lands among the low group**: every high magnitude / 100
//!    lies within [smallest low / 1.5, largest low · 1.5];
//! 3. for a quantity that is **not marked a fraction**, also **one level**: once the high group
//!    is divided by 100, all magnitudes lie within 10 % of the largest.
//!
//! A quantity is *marked a fraction* by its name (it contains `efficiency`, `fraction` or `η`,
//! or is `eta` or ends or starts with `eta` and an underscore) or its unit (`%`, `percent`,
//! `fraction`). A quantity whose unit is given and is not dimensionless (anything but `-`,
//! `1`, an empty text, `%`, `percent` or `fraction`) is never checked: a head in metres, a
//! torque in N·m or a pressure in Pa cannot be a percentage.
//!
//! **Why honest data pass.** A head curve in metres that collapses at deep breakdown passes
//! even without its unit: its points fill the decades between plateau and collapse (rule 1),
//! and where one point drops a hundredfold the others do not sit at one level (rule 3). An
//! NPSH or a vapour volume that spans decades along a sweep fills the gap (rule 1). A mesh
//! study's values agree to a few percent; for honest values to trip rules 1–3 they would have
//! to differ between meshes by a factor of 90 to 110 while agreeing within 10 % inside each
//! group — no estimate of numerical uncertainty exists for such a set, so refusing it loses
//! nothing a reviewer could defend. What the rule cannot see: a percentage below 1 among
//! fractions (0.5 % written as 0.5) reads as a fraction; an unmarked sweep response with one
//! point in percent along a falling curve fails rule 3 and passes.

/// The two groups of a value set that mixes percent and fractions.
#[derive(Debug, Clone, PartialEq)]
pub struct ScaleMix {
    /// Indices (into the values given) of the values that read as fractions, in (0, 1].
    pub fractions: Vec<usize>,
    /// Indices of the values that read as percent, in (1, 100].
    pub percents: Vec<usize>,
}

impl ScaleMix {
    /// The smaller group (the values most likely mistyped); on a tie, the percent group.
    pub fn odd(&self) -> &[usize] {
        if self.fractions.len() < self.percents.len() {
            &self.fractions
        } else {
            &self.percents
        }
    }

    /// Whether the odd group is the fraction group.
    pub fn odd_are_fractions(&self) -> bool {
        self.fractions.len() < self.percents.len()
    }
}

/// Smallest ratio between the groups' magnitudes (rule 1).
const GAP: f64 = 10.0;
/// How far beyond the low group's range a rescaled high value may land (rule 2).
const WIDEN: f64 = 1.5;
/// Spread allowed on one level for an unmarked quantity (rule 3).
const LEVEL: f64 = 0.1;

/// Whether a quantity's name or unit marks it a fraction (see the module notes).
pub fn marks_fraction(name: &str, unit: Option<&str>) -> bool {
    let n = name.to_lowercase();
    let by_name = n.contains("efficiency")
        || n.contains("fraction")
        || n.contains('η')
        || n == "eta"
        || n.starts_with("eta_")
        || n.ends_with("_eta");
    let by_unit = unit.is_some_and(|u| {
        matches!(
            u.trim().to_lowercase().as_str(),
            "%" | "percent" | "fraction"
        )
    });
    by_name || by_unit
}

/// Whether a unit leaves a quantity possibly a fraction or percentage (`None`, empty, `-`,
/// `1`, `%`, `percent`, `fraction`).
pub fn dimensionless(unit: Option<&str>) -> bool {
    match unit {
        None => true,
        Some(u) => matches!(
            u.trim().to_lowercase().as_str(),
            "" | "-" | "1" | "%" | "percent" | "fraction"
        ),
    }
}

/// Checks one quantity's values (see the module notes for the rule). `name` and `unit` say
/// whether the quantity is marked a fraction or is in a unit that cannot be a percentage.
/// Returns the two groups when the values mix percent and fractions; `None` otherwise
/// (also for non-finite values, which other checks refuse).
pub fn mixed_scale(values: &[f64], name: &str, unit: Option<&str>) -> Option<ScaleMix> {
    if !dimensionless(unit) {
        return None;
    }
    let marked = marks_fraction(name, unit);
    if values.iter().any(|v| !v.is_finite()) {
        return None;
    }
    let nonzero = || values.iter().filter(|v| **v != 0.0);
    let positive = nonzero().all(|v| *v > 0.0);
    let negative = nonzero().all(|v| *v < 0.0);
    if !(positive || negative) {
        return None;
    }
    if nonzero().any(|v| v.abs() > 100.0) {
        return None;
    }
    let mut fractions = Vec::new();
    let mut percents = Vec::new();
    for (i, v) in values.iter().enumerate() {
        let a = v.abs();
        if a == 0.0 {
            continue;
        }
        if a <= 1.0 {
            fractions.push(i);
        } else {
            percents.push(i);
        }
    }
    if fractions.is_empty() || percents.is_empty() {
        return None;
    }
    let mag = |i: &usize| values[*i].abs();
    let low_min = fractions.iter().map(mag).fold(f64::INFINITY, f64::min);
    let low_max = fractions.iter().map(mag).fold(0.0, f64::max);
    let high_min = percents.iter().map(mag).fold(f64::INFINITY, f64::min);
    let high_max = percents.iter().map(mag).fold(0.0, f64::max);
    // Rule 1: a decade with no value in it.
    if high_min < GAP * low_max {
        return None;
    }
    // Rule 2: the percent group, divided by 100, lands among the fractions.
    if high_min / 100.0 < low_min / WIDEN || high_max / 100.0 > low_max * WIDEN {
        return None;
    }
    // Rule 3: an unmarked quantity must sit on one level once rescaled.
    if !marked {
        let lo = low_min.min(high_min / 100.0);
        let hi = low_max.max(high_max / 100.0);
        if hi - lo > LEVEL * hi {
            return None;
        }
    }
    Some(ScaleMix {
        fractions,
        percents,
    })
}

/// The sentence that says which values read as which scale: `labels[i]` names value `i`
/// (a mesh, a point).
pub fn describe(mix: &ScaleMix, values: &[f64], labels: &[String]) -> String {
    let list = |ix: &[usize]| -> String {
        let mut parts: Vec<String> = ix
            .iter()
            .take(6)
            .map(|&i| {
                format!(
                    "{} ({})",
                    crate::sweep::fmt_num(values.get(i).copied().unwrap_or(f64::NAN)),
                    labels.get(i).map_or("?", String::as_str)
                )
            })
            .collect();
        if ix.len() > 6 {
            parts.push(format!("and {} more", ix.len() - 6));
        }
        parts.join(", ")
    };
    format!(
        "the values mix percent and fractions: {} read{} as percent, {} as fractions; write every value on one scale (as fractions: 0.83 for 83 %)",
        list(&mix.percents),
        if mix.percents.len() == 1 { "s" } else { "" },
        list(&mix.fractions),
    )
}

/// Refuses a scalar quantity whose values (finest mesh first, `meshes` their names) mix
/// percent and fractions, at the key of the first odd value.
pub(crate) fn check_quantity(
    name: &str,
    unit: Option<&str>,
    values: &[f64],
    meshes: &[String],
    at: &super::At,
) -> Result<(), super::StudyError> {
    match mixed_scale(values, name, unit) {
        None => Ok(()),
        Some(mix) => {
            let first = mix.odd().first().copied().unwrap_or(0);
            let mesh = meshes.get(first).map_or("", String::as_str);
            Err(at.err(
                format!("quantities.{name}.values.{mesh}"),
                describe(&mix, values, meshes),
            ))
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // Source: the case (manufactured): efficiency 0.83 on two meshes, 83.31 on one.
    #[test]
    fn one_efficiency_in_percent_among_fractions() {
        let m = mixed_scale(&[0.8331, 0.83, 83.31], "efficiency", Some("-"));
        assert_eq!(
            m,
            Some(ScaleMix {
                fractions: vec![0, 1],
                percents: vec![2]
            })
        );
        assert_eq!(m.as_ref().map(ScaleMix::odd), Some(&[2usize][..]));
        // The same values without a name that marks a fraction: one level once rescaled.
        assert!(mixed_scale(&[0.8331, 0.83, 83.31], "q", None).is_some());
        // Two in percent, one fraction: the fraction is the odd one.
        let m = mixed_scale(&[90.93, 0.9071, 90.33], "eta", None);
        assert_eq!(m.as_ref().map(ScaleMix::odd), Some(&[1usize][..]));
        assert_eq!(m.map(|m| m.odd_are_fractions()), Some(true));
    }

    // Source: manufactured sweep — the demo-like efficiency curve with one point in percent.
    #[test]
    fn one_sweep_point_in_percent() {
        let mut v = vec![
            0.9093, 0.9093, 0.9094, 0.9102, 0.9087, 0.9033, 0.8982, 0.8890, 0.8722, 0.8418, 0.8086,
            0.7590, 0.6851, 0.5748, 0.4103,
        ];
        v[9] = 84.18;
        let m = mixed_scale(&v, "efficiency", None).map(|m| m.odd().to_vec());
        assert_eq!(m, Some(vec![9]));
        // The lowest point in percent lands below the others' range, within the widening.
        let mut w = v.clone();
        w[9] = 0.8418;
        w[14] = 41.03;
        let m = mixed_scale(&w, "efficiency", None).map(|m| m.odd().to_vec());
        assert_eq!(m, Some(vec![14]));
        // Unmarked, a falling curve is not one level: passes (a documented blind spot).
        assert_eq!(mixed_scale(&v, "response", None), None);
    }

    // Source: honest data (manufactured, common practice, no source): none of these mix.
    #[test]
    fn honest_data_pass() {
        // Heads in metres, with or without the unit.
        let head = [
            61.42, 61.41, 61.36, 61.24, 60.94, 60.48, 59.59, 57.85, 54.46, 47.86,
        ];
        assert_eq!(mixed_scale(&head, "head", Some("m")), None);
        assert_eq!(mixed_scale(&head, "head", None), None);
        // A head that collapses to 0.5 m at deep breakdown: not one level (rule 3).
        let mut h2 = head.to_vec();
        h2.push(0.5);
        assert_eq!(mixed_scale(&h2, "head", None), None);
        // ... and in metres never checked at all.
        assert_eq!(mixed_scale(&[61.0, 60.0, 0.6], "head", Some("m")), None);
        // NPSH along a sweep from 30 m to 0.1 m fills the decades (rule 1).
        let npsh: Vec<f64> = (0..40).map(|i| 30.0 * 0.86f64.powi(i)).collect();
        assert_eq!(mixed_scale(&npsh, "npsh", None), None);
        // A vapour volume fraction in percent spanning decades (marked) fills the gap.
        let vap = [0.0, 0.0, 0.2, 0.8, 2.5, 10.0, 45.0];
        assert_eq!(mixed_scale(&vap, "vapour_fraction", Some("%")), None);
        // A lift coefficient around 1 (values on both sides of 1): no decade gap.
        assert_eq!(mixed_scale(&[0.98, 1.02, 1.05], "lift", Some("-")), None);
        // All fractions, all percent: one scale each.
        assert_eq!(
            mixed_scale(&[0.9093, 0.9071, 0.9033], "efficiency", None),
            None
        );
        assert_eq!(
            mixed_scale(&[90.93, 90.71, 90.33], "efficiency", None),
            None
        );
        // A coarse-mesh efficiency a little above 1: no gap.
        assert_eq!(
            mixed_scale(&[0.991, 0.996, 1.004], "efficiency", None),
            None
        );
        // Mixed signs, values above 100, non-finite values: not checked.
        assert_eq!(mixed_scale(&[-0.83, 0.83, 83.0], "efficiency", None), None);
        assert_eq!(mixed_scale(&[0.83, 83.0, 830.0], "efficiency", None), None);
        assert_eq!(
            mixed_scale(&[0.83, 83.0, f64::NAN], "efficiency", None),
            None
        );
        // Negated responses are read by magnitude.
        assert!(mixed_scale(&[-0.83, -0.83, -83.0], "efficiency", None).is_some());
        assert_eq!(mixed_scale(&[], "efficiency", None), None);
    }

    // Source: the markers of this module (its documented rule).
    #[test]
    fn markers() {
        assert!(marks_fraction("Efficiency", None));
        assert!(marks_fraction("vapour_fraction", None));
        assert!(marks_fraction("eta_h", None));
        assert!(marks_fraction("η", None));
        assert!(marks_fraction("q", Some(" % ")));
        assert!(!marks_fraction("theta", None));
        assert!(!marks_fraction("head", Some("-")));
        assert!(dimensionless(Some("-")));
        assert!(!dimensionless(Some("N·m")));
    }
}
