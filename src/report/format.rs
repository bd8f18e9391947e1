//! Display precision in one place: numbers in every human-facing format go through here.

/// A number with `sig` significant digits, plain notation for ordinary magnitudes and
/// scientific notation otherwise. Non-finite numbers are spelled out, never printed as NaN.
pub fn sig(v: f64, sig: usize) -> String {
    if v.is_nan() {
        return "not a number".into();
    }
    if v.is_infinite() {
        return if v > 0.0 {
            "infinite".into()
        } else {
            "minus infinite".into()
        };
    }
    if v == 0.0 {
        return "0".into();
    }
    let mag = v.abs().log10().floor() as i32;
    if !(-4..=6).contains(&mag) {
        return format!("{:.*e}", sig.saturating_sub(1), v);
    }
    let decimals = (sig as i32 - 1 - mag).max(0) as usize;
    format!("{v:.decimals$}")
}

/// A number as the user wrote it when that is short (up to `max_sig` significant digits),
/// otherwise rounded to `max_sig` significant digits.
pub fn num(v: f64, max_sig: usize) -> String {
    if !v.is_finite() {
        return sig(v, max_sig);
    }
    let plain = format!("{v}");
    let digits = plain
        .chars()
        .filter(|c| c.is_ascii_digit())
        .collect::<String>();
    let significant = digits.trim_start_matches('0').trim_end_matches('0').len();
    if significant <= max_sig && plain.len() <= 12 {
        plain
    } else {
        sig(v, max_sig)
    }
}

/// A value and its uncertainty, the value rounded to the last digit shown of U (three
/// significant digits of U): 0.16400230 ± 0.0091276 → ("0.16400", "0.00913").
pub fn with_uncertainty(v: f64, u: f64) -> (String, String) {
    if !(v.is_finite() && u.is_finite()) || u <= 0.0 {
        return (num(v, 8), sig(u, 3));
    }
    let mag = u.log10().floor() as i32;
    if !(-4..=6).contains(&mag) || v.abs() >= 1e9 {
        return (sig(v, 8), sig(u, 3));
    }
    let decimals = (2 - mag).max(0) as usize;
    (format!("{v:.decimals$}"), format!("{u:.decimals$}"))
}

/// A fraction as a percentage with three significant digits: 0.00412 → "0.412 %".
pub fn percent(v: f64) -> String {
    format!("{} %", sig(v * 100.0, 3))
}

/// An optional number, with a dash where it does not exist.
pub fn opt(v: Option<f64>, digits: usize) -> String {
    v.map_or_else(|| "–".to_string(), |x| sig(x, digits))
}

/// An optional fraction as a percentage, with a dash where it does not exist.
pub fn opt_percent(v: Option<f64>) -> String {
    v.map_or_else(|| "–".to_string(), percent)
}

/// A number at full precision for machine-read formats (CSV): the shortest text that reads
/// back to the same `f64`, in scientific notation for very small or very large magnitudes.
/// Non-finite numbers give an empty string (a missing figure), never `NaN` or `inf`.
pub fn full(v: f64) -> String {
    if !v.is_finite() {
        return String::new();
    }
    let a = v.abs();
    if a != 0.0 && !(1e-5..1e16).contains(&a) {
        format!("{v:e}")
    } else {
        format!("{v}")
    }
}

/// How u_num follows from U in a comparison: `U/d` when the study set one divisor, else the
/// governing method's own divisor (docs/method.md §8).
pub fn u_num_phrase(divisor: Option<f64>) -> String {
    match divisor {
        Some(d) => format!("u_num = U/{}", num(d, 4)),
        None => "u_num = U/divisor of the governing method (1.15 for the GCI with Fs = 1.25, \
                 √3 for half an oscillation's range, 2 otherwise), iterative part added by RSS"
            .to_string(),
    }
}

/// The label of what stated a quantity's uncertainty: the published rule when a three-mesh
/// estimate governs (e.g. "correction factor (Stern et al. 2001)"), else the estimate.
pub fn governing_label(q: &crate::assess::QuantityResult) -> String {
    use crate::assess::Method;
    match (
        q.uncertainty.as_ref().map(|u| u.method),
        q.governing.as_ref(),
    ) {
        (Some(Method::ThreeGrid), Some(g)) => match g.three_mesh_rule {
            Some(r) if g.rule == Some(crate::assess::Rule::FormalOrder) => {
                format!(
                    "{}, formal order with Fs = 3 (no observed order)",
                    r.title()
                )
            }
            Some(r) => r.title().to_string(),
            None => method_label(Method::ThreeGrid).to_string(),
        },
        (Some(m), _) => method_label(m).to_string(),
        (None, _) => "none".to_string(),
    }
}

/// The label of the estimate that governed an uncertainty, for table cells.
pub fn method_label(m: crate::assess::Method) -> &'static str {
    use crate::assess::Method;
    match m {
        Method::ThreeGrid => "three-mesh GCI",
        Method::OscillationRange => "half range of the oscillation",
        Method::LeastSquares => "least-squares fit",
        Method::TwoMesh => "two-mesh GCI (formal order assumed)",
    }
}

/// Whether the governing estimate of a quantity (not divergent) does not demonstrate
/// convergence, as [`crate::assess::govern`] recorded it.
pub fn not_demonstrated(q: &crate::assess::QuantityResult) -> bool {
    q.governing.as_ref().is_some_and(|g| {
        !g.demonstrated && g.convergence != crate::estimate::Convergence::Divergent
    })
}

/// The class a quantity is shown with: "convergence not demonstrated" where the governing
/// record says so (never "monotonic" then), "not computed" where the result could not be
/// computed, else its convergence class, or "no estimate".
pub fn class_label(q: &crate::assess::QuantityResult) -> &'static str {
    if q.not_computed.is_some() {
        NOT_COMPUTED
    } else if not_demonstrated(q) {
        NOT_DEMONSTRATED
    } else {
        q.convergence.map_or("no estimate", |c| c.label())
    }
}

/// The class shown for a result that could not be computed (its reason is shown beside it).
pub const NOT_COMPUTED: &str = "not computed";

/// The words shown for a quantity whose convergence the data do not demonstrate.
pub const NOT_DEMONSTRATED: &str = "convergence not demonstrated";

/// The observed order of the estimate that governed a quantity, as [`crate::assess::govern`]
/// recorded it (`None` without one).
pub fn governing_order(q: &crate::assess::QuantityResult) -> Option<f64> {
    q.governing.as_ref().and_then(|g| g.order)
}

/// The extrapolated value of the estimate that governed a quantity, as
/// [`crate::assess::govern`] recorded it (`None` without one).
pub fn governing_extrapolated(q: &crate::assess::QuantityResult) -> Option<f64> {
    q.governing.as_ref().and_then(|g| g.extrapolated)
}

/// Indices of at most about `max` rows out of `n`, evenly spaced, always with the last row:
/// the condensed band table. Returns the indices and the step (1 when every row is kept).
pub fn condensed(n: usize, max: usize) -> (Vec<usize>, usize) {
    let step = n.div_ceil(max.max(1)).max(1);
    let idx = (0..n).filter(|i| i % step == 0 || i + 1 == n).collect();
    (idx, step)
}

/// The places of an aggregated point warning as listed: the first places, then "… and N
/// more" for the points not listed (`show` words one place).
pub fn places<T>(
    w: &crate::point_warnings::PointWarning<T>,
    show: impl Fn(&T) -> String,
) -> String {
    let mut s = w.at.iter().map(show).collect::<Vec<_>>().join(", ");
    if w.more > 0 {
        s.push_str(&format!(" … and {} more", w.more));
    }
    s
}

/// How many points raised an aggregated point warning: "7 of 13".
pub fn points_of<T>(w: &crate::point_warnings::PointWarning<T>, total: u64) -> String {
    format!("{} of {total}", w.points)
}

/// The class of a band point as shown: "convergence not demonstrated" where the point's
/// record says so (never "monotonic" then), else its class, or "no estimate".
pub fn point_class_label(p: &crate::assess::sweep::BandPoint) -> &'static str {
    match p.convergence {
        Some(crate::estimate::Convergence::Divergent) => "divergent",
        Some(_) if !p.demonstrated => NOT_DEMONSTRATED,
        Some(c) => c.label(),
        None => "no estimate",
    }
}

/// The mean and median order of a band, comparison or field column in words, with how many
/// points they cover: "mean 3.39, median 3.14 over 13 points".
pub fn orders(mean: Option<f64>, median: Option<f64>, points: u64) -> String {
    match (mean, median) {
        (None, None) => "– (no point with a demonstrated order)".to_string(),
        _ => format!(
            "mean {}, median {} over {points} points",
            opt(mean, 3),
            opt(median, 3)
        ),
    }
}

/// An English ordinal: 1st, 2nd, 3rd, 4th, 11th, 12th, 13th, 21st, 22nd, 102nd.
pub fn ordinal(n: usize) -> String {
    let suffix = match (n % 10, n % 100) {
        (_, 11..=13) => "th",
        (1, _) => "st",
        (2, _) => "nd",
        (3, _) => "rd",
        _ => "th",
    };
    format!("{n}{suffix}")
}

#[cfg(test)]
mod tests {
    #[test]
    fn ordinals_follow_english_usage() {
        // English spelling of ordinals (a fact of the language, no source needed)
        for (n, w) in [
            (1, "1st"),
            (2, "2nd"),
            (3, "3rd"),
            (4, "4th"),
            (11, "11th"),
            (12, "12th"),
            (13, "13th"),
            (21, "21st"),
            (22, "22nd"),
            (102, "102nd"),
            (111, "111th"),
        ] {
            assert_eq!(super::ordinal(n), w);
        }
    }

    use super::*;

    #[test]
    fn formats() {
        assert_eq!(sig(0.909312, 4), "0.9093");
        assert_eq!(sig(6.16850, 5), "6.1685");
        assert_eq!(sig(1234.5, 3), "1234");
        assert_eq!(sig(1.5e-7, 3), "1.50e-7");
        assert_eq!(sig(f64::NAN, 3), "not a number");
        assert_eq!(percent(0.004123), "0.412 %");
        assert_eq!(opt(None, 3), "–");
        assert_eq!(num(18000.0, 6), "18000");
        assert_eq!(
            with_uncertainty(0.16400230, 0.0091276),
            ("0.16400".to_string(), "0.00913".to_string())
        );
        assert_eq!(
            with_uncertainty(61.42, 0.31036),
            ("61.420".to_string(), "0.310".to_string())
        );
        assert_eq!(num(6.063, 7), "6.063");
        assert_eq!(num(6.168495572330159, 7), "6.168496");
    }

    #[test]
    fn full_precision_reads_back_exactly() {
        for v in [
            0.0037456747027612603,
            1.0 / 3.0,
            -2.5e-9,
            3.4e6,
            6.02e23,
            0.0,
            -0.0,
        ] {
            let s = full(v);
            let back: f64 = s.parse().unwrap();
            assert_eq!(back.to_ne_bytes(), v.to_ne_bytes(), "{s}");
        }
        assert_eq!(full(f64::NAN), "");
        assert_eq!(full(f64::INFINITY), "");
        assert_eq!(full(3.4e6), "3400000");
        assert_eq!(full(1.5e-7), "1.5e-7");
    }

    #[test]
    fn point_warnings_are_worded() {
        let w = crate::point_warnings::PointWarning {
            code: "order_high".into(),
            points: 7,
            at: vec![0.144, 0.15],
            more: 5,
        };
        assert_eq!(places(&w, |x| num(*x, 6)), "0.144, 0.15 … and 5 more");
        assert_eq!(points_of(&w, 13), "7 of 13");
        assert_eq!(
            orders(Some(3.3875), Some(3.143), 13),
            "mean 3.39, median 3.14 over 13 points"
        );
        assert_eq!(
            orders(None, None, 0),
            "– (no point with a demonstrated order)"
        );
    }

    #[test]
    fn condensed_keeps_the_last_row() {
        assert_eq!(condensed(5, 16), (vec![0, 1, 2, 3, 4], 1));
        assert_eq!(
            condensed(20, 16),
            (vec![0, 2, 4, 6, 8, 10, 12, 14, 16, 18, 19], 2)
        );
        assert_eq!(condensed(0, 16), (vec![], 1));
    }
}
