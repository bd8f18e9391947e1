//! Warnings of the many points of one result — a sweep's band, a comparison along a sweep, a
//! field column — aggregated per code: how many points raised each code and where (the first
//! few places along the result, the rest counted), so that a point's warning is never lost and
//! a long list never floods a report.
//!
//! The per-point codes are those the scalar estimate raises at the point (see the warning codes
//! in `docs/study-file.md`), plus [`ORDER_AT_BOUND`] for a three-mesh observed order on an end
//! of its search. The list is ordered by [`rank`]: the codes that withdraw a point's uncertainty
//! first.

use serde::Serialize;

/// How many places are listed per code: the first ones along the result (increasing abscissa,
/// or the order of the probe files); the others are counted in [`PointWarning::more`].
pub const LISTED: usize = 5;

/// Per-point code of a three-mesh observed order that sits on an end of its search (the order
/// cap `settings.order_max` or the scan's lower end): the true order may lie outside it.
pub const ORDER_AT_BOUND: &str = "order_at_bound";

/// Per-point code of a point whose convergence the data do not demonstrate (the rule of
/// `assess::govern`, the same code as for a quantity).
pub const NOT_DEMONSTRATED: &str = "convergence_not_demonstrated";

/// Codes listed first, in this order (the ones that withdraw or question a point's
/// uncertainty); any other code follows, alphabetically.
const FIRST: [&str; 12] = [
    NOT_DEMONSTRATED,
    ORDER_AT_BOUND,
    "ls_order_at_bound",
    "divergent",
    "order_not_found",
    "order_low",
    "order_high",
    "order_far_from_formal",
    "triplet_orders_differ",
    "estimates_disagree",
    "estimate_failed",
    "oscillatory",
];

/// The place of a code in an aggregated list: the index in the fixed order above, or after all
/// of them.
pub fn rank(code: &str) -> usize {
    FIRST.iter().position(|c| *c == code).unwrap_or(FIRST.len())
}

/// One code over the points of a result (contract: the serde form).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PointWarning<T> {
    /// The warning code (stable snake_case, as on a quantity).
    pub code: String,
    /// How many points raised it.
    pub points: u64,
    /// Where: the first [`LISTED`] places (abscissae of band or comparison points, ids of field
    /// probes), in the order of the result.
    pub at: Vec<T>,
    /// Points raising it beyond those listed in `at` (`points − at.len()`).
    pub more: u64,
}

impl<T> PointWarning<T> {
    /// A code seen at no point yet.
    pub fn new(code: &str) -> Self {
        PointWarning {
            code: code.to_string(),
            points: 0,
            at: Vec::new(),
            more: 0,
        }
    }

    /// Counts one more point, listing its place while fewer than [`LISTED`] are.
    pub fn add(&mut self, at: T) {
        self.points += 1;
        if self.at.len() < LISTED {
            self.at.push(at);
        } else {
            self.more += 1;
        }
    }

    /// Adds the points of a later part of the same result (places stay in order).
    pub fn merge(&mut self, later: PointWarning<T>) {
        self.points += later.points;
        let room = LISTED.saturating_sub(self.at.len());
        let listed = later.at.len();
        self.at.extend(later.at.into_iter().take(room));
        self.more += later.more + listed.saturating_sub(room) as u64;
    }
}

/// Collects the codes of the points of one result, in the order of the points.
#[derive(Debug, Clone)]
pub struct Tally<T> {
    entries: Vec<PointWarning<T>>,
}

impl<T> Default for Tally<T> {
    fn default() -> Self {
        Tally {
            entries: Vec::new(),
        }
    }
}

impl<T: Clone> Tally<T> {
    /// Records the codes raised at one point (each code counts once per point, however often
    /// the point raised it).
    pub fn point<'a>(&mut self, codes: impl IntoIterator<Item = &'a str>, at: T) {
        let mut seen: Vec<&str> = Vec::new();
        for code in codes {
            if seen.contains(&code) {
                continue;
            }
            seen.push(code);
            match self.entries.iter_mut().find(|e| e.code == code) {
                Some(e) => e.add(at.clone()),
                None => {
                    let mut e = PointWarning::new(code);
                    e.add(at.clone());
                    self.entries.push(e);
                }
            }
        }
    }

    /// The aggregated list, ordered by [`rank`] then code.
    pub fn finish(mut self) -> Vec<PointWarning<T>> {
        self.entries
            .sort_by(|a, b| (rank(&a.code), &a.code).cmp(&(rank(&b.code), &b.code)));
        self.entries
    }
}

/// The median of some values (the mean of the two middle ones for an even count); `None` for
/// none. Values are finite.
pub fn median(mut v: Vec<f64>) -> Option<f64> {
    if v.is_empty() {
        return None;
    }
    v.sort_by(f64::total_cmp);
    let n = v.len();
    Some(if n % 2 == 1 {
        v[n / 2]
    } else {
        0.5 * (v[n / 2 - 1] + v[n / 2])
    })
}

/// The mean of some values; `None` for none.
pub fn mean(v: &[f64]) -> Option<f64> {
    (!v.is_empty()).then(|| v.iter().sum::<f64>() / v.len() as f64)
}

/// One code in words for a warning message: `order_high at 7 of 13 points (sigma = 0.144,
/// 0.15, 0.156, 0.162, 0.168 and 2 more)`. `place` words one place.
pub fn describe<T>(
    w: &PointWarning<T>,
    total: u64,
    what: &str,
    place: impl Fn(&T) -> String,
) -> String {
    let mut s = format!("{} at {} of {total} points", w.code, w.points);
    if !w.at.is_empty() {
        let list: Vec<String> = w.at.iter().map(place).collect();
        s.push_str(&format!(" ({what}{}", list.join(", ")));
        if w.more > 0 {
            s.push_str(&format!(" … and {} more", w.more));
        }
        s.push(')');
    }
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn codes_count_once_per_point_and_list_the_first_places() {
        // Constructed input, counted by hand: eight points, every other one raising
        // `convergence_not_demonstrated`, every one `order_high` (one of them twice).
        let mut t = Tally::default();
        for x in 0..8 {
            let codes: &[&str] = if x % 2 == 0 {
                &["order_high", "order_high", NOT_DEMONSTRATED]
            } else {
                &["order_high"]
            };
            t.point(codes.iter().copied(), x);
        }
        let l = t.finish();
        assert_eq!(l.len(), 2);
        // The code that withdraws the uncertainty comes first.
        assert_eq!(l[0].code, NOT_DEMONSTRATED);
        assert_eq!(
            (l[0].points, &l[0].at[..], l[0].more),
            (4, &[0, 2, 4, 6][..], 0)
        );
        assert_eq!(l[1].code, "order_high");
        assert_eq!(
            (l[1].points, &l[1].at[..], l[1].more),
            (8, &[0, 1, 2, 3, 4][..], 3)
        );
        assert_eq!(
            describe(&l[1], 8, "x = ", |x| x.to_string()),
            "order_high at 8 of 8 points (x = 0, 1, 2, 3, 4 … and 3 more)"
        );
    }

    #[test]
    fn merging_parts_keeps_the_first_places_in_order() {
        // Constructed input, counted by hand: two parts of one result, 3 and 7 points.
        let mut a = PointWarning::new("divergent");
        for x in [1, 2, 3] {
            a.add(x);
        }
        let mut b = PointWarning::new("divergent");
        for x in [4, 5, 6, 7, 8, 9, 10] {
            b.add(x);
        }
        a.merge(b);
        assert_eq!((a.points, &a.at[..], a.more), (10, &[1, 2, 3, 4, 5][..], 5));
        assert_eq!(a.points, a.at.len() as u64 + a.more);
    }

    #[test]
    fn median_and_mean() {
        // Arithmetic by hand.
        assert_eq!(median(vec![3.0, 1.0, 2.0]), Some(2.0));
        assert_eq!(median(vec![4.0, 1.0, 2.0, 3.0]), Some(2.5));
        assert_eq!(median(vec![]), None);
        assert_eq!(mean(&[1.0, 2.0, 6.0]), Some(3.0));
        assert_eq!(mean(&[]), None);
    }

    #[test]
    fn unknown_codes_follow_the_known_ones_alphabetically() {
        let mut t = Tally::default();
        t.point(
            ["zeta_code", "alpha_code", "oscillatory", ORDER_AT_BOUND],
            0.0,
        );
        let codes: Vec<String> = t.finish().into_iter().map(|w| w.code).collect();
        assert_eq!(
            codes,
            ["order_at_bound", "oscillatory", "alpha_code", "zeta_code"]
        );
    }
}
