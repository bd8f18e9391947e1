//! A drafted uncertainty paragraph: the assessment in running text that a CFD engineer can
//! adapt for a report or a paper.
//!
//! It names the method that governed (three-mesh Richardson extrapolation with the grid
//! convergence index after Celik et al. 2008, the least-squares procedure of Eça & Hoekstra
//! 2014, half the range of an oscillation after Stern et al. 2001), the meshes (count, cell
//! counts or sizes, refinement ratios), and for every quantity — and every sweep breakdown and
//! its reference — the observed order, the safety factor, the value ± U with U relative to the
//! value, and the convergence class. A quantity without an uncertainty is stated as such: no
//! discretisation uncertainty can be claimed for it.
//!
//! Every figure is one the [`Assessment`] holds, rounded for display by [`super::format`];
//! nothing is computed here beyond formatting.

use super::format::{not_demonstrated, num, percent, points_of, sig, with_uncertainty};
use super::table::{breakdown_rule, symbol};
use crate::assess::sweep::SweepResult;
use crate::assess::{Assessment, Method, QuantityResult, Rule};
use crate::estimate::least_squares::FitKind;
use crate::estimate::Convergence;

/// The drafted uncertainty paragraph of an assessment: sentences separated by single spaces,
/// no line breaks, no markup.
pub fn uncertainty_paragraph(a: &Assessment) -> String {
    let mut s = vec![method_sentence(a)];
    s.extend(meshes_sentence(a));
    for q in &a.quantities {
        if let Some(nc) = &q.not_computed {
            s.push(format!("The uncertainty of {} is {}.", q.name, nc.text()));
            continue;
        }
        let (value, tail) = figure(q, unit_suffix(q.unit.as_deref()));
        s.push(format!(
            "On the finest mesh, {} is {value}, {tail}.",
            q.name
        ));
    }
    for sw in &a.sweeps {
        s.extend(sweep_sentences(a, sw));
    }
    for c in a
        .comparisons
        .iter()
        .filter(|c| !c.carried_by_u_num.is_empty())
    {
        let data = match c.origin {
            crate::study::reference::Origin::Measurement => "the measurements",
            crate::study::reference::Origin::Benchmark => "the published benchmark solution",
        };
        s.push(format!(
            "In the comparison {} with {data}, {} of {} points agree only because of the numerical uncertainty (warning {}): that agreement supports no conclusion until the discretisation uncertainty is reduced.",
            c.name,
            c.carried_by_u_num.len(),
            c.comparison.summary.points,
            crate::warning::COMPARISON_CARRIED_BY_U_NUM,
        ));
    }
    s.join(" ")
}

/// Every estimated quantity: the scalar quantities, then each sweep's breakdowns and references.
fn all_quantities(a: &Assessment) -> impl Iterator<Item = &QuantityResult> {
    a.quantities.iter().chain(
        a.sweeps
            .iter()
            .flat_map(|s| &s.breakdown)
            .flat_map(|b| [&b.x_estimate, &b.reference_estimate]),
    )
}

fn method_sentence(a: &Assessment) -> String {
    let governs =
        |m: Method| all_quantities(a).any(|q| q.uncertainty.as_ref().map(|u| u.method) == Some(m));
    let (tg, ls, osc) = (
        governs(Method::ThreeGrid),
        governs(Method::LeastSquares),
        governs(Method::OscillationRange),
    );
    let three = if a.meshes.len() == 3 {
        "the three meshes"
    } else {
        "the three finest meshes"
    };
    let mut named: Vec<crate::estimate::rules::Rule> = Vec::new();
    for g in all_quantities(a).filter_map(|q| q.governing.as_ref()) {
        if matches!(g.method, Method::ThreeGrid | Method::OscillationRange) && g.absolute.is_some()
        {
            if let Some(r) = g.three_mesh_rule.filter(|r| !named.contains(r)) {
                named.push(r);
            }
        }
    }
    let gci = match named.as_slice() {
        [] | [crate::estimate::rules::Rule::CelikGci] => format!(
            "Richardson extrapolation with the grid convergence index (GCI) on {three}, following Celik et al. (2008)"
        ),
        rules => format!(
            "Richardson extrapolation on {three}, U being stated by the {} (the GCI of Celik et al. (2008) is reported beside it)",
            and_list(&rules.iter().map(|r| r.title().to_string()).collect::<Vec<_>>())
        ),
    };
    let lsq = "the least-squares procedure of Eça and Hoekstra (2014) over all the meshes";
    let tried_ls = all_quantities(a).any(|q| q.least_squares.is_some());
    let how = match (tg, ls) {
        (true, true) => format!("{gci} and, where stated, by {lsq}"),
        (false, true) => lsq.to_string(),
        (false, false) if !osc && tried_ls => format!("{gci} and by {lsq}"),
        _ => gci,
    };
    let how = if governs(Method::TwoMesh) {
        "the two-mesh GCI of Roache (1998) on the two meshes, with the formal order assumed and \
         safety factor 3"
            .to_string()
    } else {
        how
    };
    let mut out = format!("The discretisation uncertainty was estimated by {how}.");
    if osc {
        out.push_str(
            " Where the solutions oscillate, U is half the range of the solutions, after Stern et al. (2001).",
        );
    }
    out
}

/// A count in words at the start of a sentence.
fn count_word(n: usize) -> String {
    const WORDS: [&str; 11] = [
        "No", "One", "Two", "Three", "Four", "Five", "Six", "Seven", "Eight", "Nine", "Ten",
    ];
    WORDS
        .get(n)
        .map_or_else(|| n.to_string(), |w| w.to_string())
}

/// `a`, `a and b`, `a, b and c`.
fn and_list(items: &[String]) -> String {
    match items {
        [] => String::new(),
        [one] => one.clone(),
        [init @ .., last] => format!("{} and {last}", init.join(", ")),
    }
}

/// The name of the refinement ratio between mesh `i + 1` and mesh `i` (1-based, finest first):
/// r21, r32, … (with a comma once a number has two digits).
fn ratio_name(coarser: usize) -> String {
    let finer = coarser - 1;
    if coarser > 9 {
        format!("r{coarser},{finer}")
    } else {
        format!("r{coarser}{finer}")
    }
}

fn meshes_sentence(a: &Assessment) -> Option<String> {
    if a.meshes.is_empty() {
        return None;
    }
    let names: Vec<String> = a.meshes.iter().map(|m| m.name.clone()).collect();
    let cells: Option<Vec<String>> = a
        .meshes
        .iter()
        .map(|m| m.cells.map(|c| num(c, 8)))
        .collect();
    let sizes = match cells {
        Some(c) => format!("with {} cells", and_list(&c)),
        None => {
            let h: Vec<String> = a.meshes.iter().map(|m| num(m.size, 5)).collect();
            format!("with representative sizes h = {}", and_list(&h))
        }
    };
    let ratios: Vec<String> = a
        .meshes
        .iter()
        .enumerate()
        .filter_map(|(i, m)| {
            m.ratio
                .map(|r| format!("{} = {}", ratio_name(i + 1), sig(r, 4)))
        })
        .collect();
    let ratios = match ratios.len() {
        0 => String::new(),
        1 => format!(", refinement ratio {}", ratios[0]),
        _ => format!(", refinement ratios {}", and_list(&ratios)),
    };
    let (were, meshes) = if a.meshes.len() == 1 {
        ("was", "mesh")
    } else {
        ("were", "meshes")
    };
    Some(format!(
        "{} {meshes} {were} used, finest first {} {sizes}{ratios}.",
        count_word(a.meshes.len()),
        and_list(&names)
    ))
}

/// ` m` after a figure, nothing for a dimensionless quantity (`-` or no unit).
fn unit_suffix(unit: Option<&str>) -> String {
    match unit.map(str::trim) {
        None | Some("" | "-" | "1") => String::new(),
        Some(u) => format!(" {u}"),
    }
}

fn class_phrase(c: Convergence) -> &'static str {
    match c {
        Convergence::Monotonic => "monotonic convergence",
        Convergence::Oscillatory => "oscillatory convergence",
        Convergence::Divergent => "divergence",
        Convergence::NoChange => "no change between the meshes",
        Convergence::Undetermined => "two meshes, so no observed convergence class",
    }
}

fn fit_phrase(kind: FitKind) -> &'static str {
    match kind {
        FitKind::Free => "free-order",
        FitKind::First => "first-order",
        FitKind::Second => "second-order",
        FitKind::FirstSecond => "first-and-second-order",
    }
}

/// What the uncertainty rests on, as a clause beginning with "with".
fn basis(q: &QuantityResult, method: Method) -> String {
    let class = q.convergence.map_or("no convergence class", class_phrase);
    // The least-squares class is over all the meshes; where the three finest meshes tell
    // another story, it is said (never "monotonic" alone while the finest meshes diverge).
    let class = match (
        method,
        q.three_grid.as_ref().map(|t| t.estimate.convergence),
    ) {
        (Method::LeastSquares, Some(c3)) if Some(c3) != q.convergence => format!(
            "{class} over all the meshes, while the three finest meshes show {}",
            class_phrase(c3)
        ),
        (Method::LeastSquares, _) => format!("{class} over all the meshes"),
        _ => class.to_string(),
    };
    match method {
        Method::OscillationRange => {
            format!("with {class}, U being half the range of the solutions")
        }
        Method::TwoMesh => {
            let fs = q
                .governing
                .as_ref()
                .and_then(|g| g.safety_factor)
                .map_or_else(String::new, |f| num(f, 3));
            format!(
                "from two meshes only, by the two-mesh GCI (Roache 1998) with the formal order \
                 assumed and safety factor Fs = {fs}; no order or convergence class can be \
                 observed from two meshes"
            )
        }
        Method::LeastSquares => match &q.least_squares {
            Some(ls) => {
                let fit = format!(
                    "the {} {} least-squares fit",
                    if ls.selected.weighted {
                        "weighted"
                    } else {
                        "unweighted"
                    },
                    fit_phrase(ls.selected.kind)
                );
                let fs = num(ls.safety_factor, 3);
                let bound = if ls.order_at_bound {
                    " (at an end of the searched range)"
                } else {
                    ""
                };
                // The fit that governed and its own order: the free order only for the free fit.
                let order = match (ls.selected.kind, ls.selected_fit().and_then(|f| f.order)) {
                    (FitKind::FirstSecond, _) => " (orders 1 and 2)".to_string(),
                    (FitKind::Free, Some(p)) => {
                        format!(" of observed order p = {}{bound}", sig(p, 4))
                    }
                    (_, Some(p)) => format!(" (order {})", num(p, 4)),
                    (_, None) => String::new(),
                };
                match ls.guard.as_ref().filter(|g| g.governs) {
                    Some(g) => format!(
                        "with U raised above the figure of {fit}{order} to the {}, the Richardson estimate of the two finest meshes with order {} and safety factor Fs = {fs}, and {class}",
                        match g.rule {
                            crate::estimate::least_squares::GuardRule::OrderTwoFloor => "order-2 floor",
                            crate::estimate::least_squares::GuardRule::FormalOrderFloor => "formal-order floor",
                        },
                        num(g.order, 4)
                    ),
                    None => format!("with {fit}{order}, safety factor Fs = {fs} and {class}"),
                }
            }
            None => format!("with {class}"),
        },
        Method::ThreeGrid => match (&q.governing, &q.three_grid) {
            (Some(g), Some(_)) => {
                let fs = g.safety_factor.map_or_else(String::new, |f| num(f, 3));
                let by = g
                    .three_mesh_rule
                    .map_or(String::new(), |r| format!(" by the {}", r.title()));
                match (g.rule, g.order) {
                    (Some(Rule::NoChange), _) => {
                        format!("with {}", class_phrase(Convergence::NoChange))
                    }
                    (Some(Rule::FormalOrder), _) | (_, None) => format!(
                        "with {class} but no observed order, so the formal order and safety factor Fs = {fs} were used"
                    ),
                    (_, Some(p)) => format!(
                        "with observed order p = {}, safety factor Fs = {fs}{by} and {class}",
                        sig(p, 4)
                    ),
                }
            }
            _ => format!("with {class}"),
        },
    }
}

/// The figure of a quantity (`value ± U unit (relative)`, or the finest value alone) and the
/// clause that follows it.
fn figure(q: &QuantityResult, unit: String) -> (String, String) {
    if not_demonstrated(q) {
        let value = q.values.first().map_or_else(
            || "not given".to_string(),
            |v| format!("{}{unit}", num(*v, 8)),
        );
        return (
            value,
            "but convergence is not demonstrated by these meshes (warning \
             `convergence_not_demonstrated`): no discretisation uncertainty can be quoted"
                .to_string(),
        );
    }
    match &q.uncertainty {
        Some(u) => {
            let (v, a) = with_uncertainty(u.value, u.absolute);
            let rel = u
                .relative
                .map_or_else(|| "the value is zero".to_string(), percent);
            // A quantity in percent carries its unit once, on the bracketed pair, and its
            // relative U is named as such.
            if unit.trim() == "%" {
                return (
                    format!("({v} ± {a}) % (relative U {rel})"),
                    basis(q, u.method),
                );
            }
            (format!("{v} ± {a}{unit} ({rel})"), basis(q, u.method))
        }
        None => {
            let value = q.values.first().map_or_else(
                || "not given".to_string(),
                |v| format!("{}{unit}", num(*v, 8)),
            );
            let why = match q.convergence {
                Some(Convergence::Divergent) => "the solutions diverge with refinement",
                None => "no estimate could be made",
                Some(_) => "no uncertainty could be formed",
            };
            (
                value,
                format!("but {why}: no discretisation uncertainty can be claimed"),
            )
        }
    }
}

fn sweep_sentences(a: &Assessment, s: &SweepResult) -> Vec<String> {
    let mut out = Vec::new();
    let study_meshes: Vec<&str> = a.meshes.iter().map(|m| m.name.as_str()).collect();
    let sweep_meshes: Vec<&str> = s.meshes.iter().map(String::as_str).collect();
    let on = if sweep_meshes == study_meshes {
        String::new()
    } else {
        format!(" (meshes {})", and_list(&s.meshes))
    };
    let x = symbol(&s.x);
    for b in &s.breakdown {
        let x = symbol(&b.abscissa);
        let at = match &b.x_estimate.not_computed {
            Some(nc) => format!("is {}", nc.text()),
            None => {
                let (xv, xt) = figure(&b.x_estimate, String::new());
                format!("lies at {} = {xv}, {xt}", super::table::subscript_b(x))
            }
        };
        let reference = match &b.reference_estimate.not_computed {
            Some(nc) => nc.text(),
            None => {
                let (rv, rt) = figure(&b.reference_estimate, String::new());
                format!("{rv}, {rt}")
            }
        };
        out.push(format!(
            "In sweep {}{on}, the breakdown for a {} {at}; its reference {} is {reference}.",
            s.name,
            breakdown_rule(b, &s.x),
            symbol(&b.response),
        ));
    }
    if let Some((band, nc)) = s
        .band
        .as_ref()
        .and_then(|b| b.not_computed.as_ref().map(|nc| (b, nc)))
    {
        out.push(format!(
            "Along sweep {}{on}, the band of {} is {}.",
            s.name,
            band.response,
            nc.text()
        ));
    } else if let Some(band) = &s.band {
        let sm = &band.summary;
        let spread = match (sm.mean_relative, sm.max_relative) {
            (Some(mean), Some(max)) => {
                let at = sm
                    .max_relative_at
                    .map_or(String::new(), |v| format!(" at {x} = {}", num(v, 6)));
                format!(
                    "a relative U of {} on average and at most {}{at}",
                    percent(mean),
                    percent(max)
                )
            }
            _ => "no relative U".to_string(),
        };
        let not_demonstrated = band
            .point_warnings
            .iter()
            .find(|w| w.code == crate::point_warnings::NOT_DEMONSTRATED)
            .map_or(0, |w| w.points);
        let classes = if not_demonstrated == 0 {
            format!(
                "{} of the points converge monotonically, {} oscillate and {} diverge",
                percent(sm.share_monotonic),
                percent(sm.share_oscillatory),
                percent(sm.share_divergent),
            )
        } else {
            format!(
                "the differences between the meshes are monotonic at {}, oscillating at {} and growing at {} of the points, but convergence is not demonstrated at {} of the {} points",
                percent(sm.share_monotonic),
                percent(sm.share_oscillatory),
                percent(sm.share_divergent),
                not_demonstrated,
                sm.points,
            )
        };
        out.push(format!(
            "Along sweep {}{on}, the band of {} over {} points has {spread}; {classes}.",
            s.name, band.response, sm.points,
        ));
        if let (Some(v), false) = (sm.variation, sm.wider_than_variation.is_empty()) {
            out.push(format!(
                "At {} of the {} band points U exceeds the variation of {} along the band ({}): there the band cannot tell the curve's shape apart, and these meshes support no conclusion about it (warning {}).",
                sm.wider_than_variation.len(),
                sm.points,
                band.response,
                sig(v, 3),
                crate::warning::BAND_WIDER_THAN_VARIATION,
            ));
        }
        out.extend(band_point_sentences(band));
    }
    out
}

/// What the band's aggregated point warnings add to the statement: the orders over the points
/// that demonstrate convergence, the points that do not, and the points whose order departs
/// from the formal order.
fn band_point_sentences(band: &crate::assess::sweep::BandResult) -> Vec<String> {
    let sm = &band.summary;
    let total = band.points.len() as u64;
    let mut out = Vec::new();
    if let (Some(mean), Some(median)) = (sm.mean_order, sm.median_order) {
        out.push(format!(
            "Over the {} band points whose convergence is demonstrated, the observed order has a median of {} and a mean of {}.",
            sm.order_points,
            sig(median, 3),
            sig(mean, 3)
        ));
    }
    let find = |code: &str| band.point_warnings.iter().find(|w| w.code == code);
    if let Some(w) = find(crate::point_warnings::NOT_DEMONSTRATED) {
        out.push(format!(
            "Convergence is not demonstrated at {} of the band points, where no uncertainty can be quoted.",
            points_of(w, total)
        ));
    }
    let departs: Vec<String> = [
        "order_at_bound",
        "order_low",
        "order_high",
        "order_far_from_formal",
    ]
    .iter()
    .filter_map(|c| find(c))
    .map(|w| format!("{} at {}", w.code, points_of(w, total)))
    .collect();
    if !departs.is_empty() {
        out.push(format!(
            "The observed order departs from the formal order at some band points ({}): the meshes are probably not in the asymptotic range there.",
            departs.join(", ")
        ));
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::report::markup::fixture;

    /// Manufactured data (analytic, no source needed beyond the algebra): drag = 10 + 0.1 h² on
    /// h = 1, 2, 4, so r = 2, p = 2 = p_f exactly, ε21 = 0.3 and δ_RE = |ε21|/(r^p − 1) = 0.1;
    /// the default rule, the correction factor of Stern et al. (2001, from memory), has C = 1
    /// and factor 9.6·0² + 1.1 = 1.1, so U = 0.110, 1.09 % of 10.1 (the Celik GCI would be
    /// 1.25 · 0.1 = 0.125). lift = 10.1, 10.0, 10.05: |ε21| = 0.1 > |ε32| = 0.05, so the
    /// differences grow with refinement — divergent by the classes of Stern et al. (2001).
    const MANUFACTURED: &str = "format: 1
title: manufactured
meshes:
  - {name: h1, size: 1.0}
  - {name: h2, size: 2.0}
  - {name: h4, size: 4.0}
quantities:
  drag:
    unit: N
    values: {h1: 10.1, h2: 10.4, h4: 11.6}
  lift:
    unit: N
    values: {h1: 10.1, h2: 10.0, h4: 10.05}
";

    #[test]
    fn exact_paragraph_of_a_manufactured_study() {
        let a = fixture::assess(MANUFACTURED);
        assert_eq!(
            uncertainty_paragraph(&a),
            "The discretisation uncertainty was estimated by Richardson extrapolation on the \
three meshes, U being stated by the correction factor (Stern et al. 2001) (the GCI of Celik et \
al. (2008) is reported beside it). \
Three meshes were used, finest first h1, h2 and h4 with representative sizes h = 1, 2 and 4, \
refinement ratios r21 = 2.000 and r32 = 2.000. \
On the finest mesh, drag is 10.100 ± 0.110 N (1.09 %), with observed order p = 2.000, \
safety factor Fs = 1.1 by the correction factor (Stern et al. 2001) and monotonic convergence. \
On the finest mesh, lift is 10.1 N, but the solutions diverge with refinement: no \
discretisation uncertainty can be claimed."
        );
    }

    /// The manufactured drag of [`MANUFACTURED`] in percent: the unit is written once, on the
    /// bracketed pair, and the relative U is named (U = 0.110 and 1.09 %, as above).
    #[test]
    fn a_quantity_in_percent_carries_its_unit_once() {
        let text = MANUFACTURED.replace(
            "unit: N\n    values: {h1: 10.1, h2: 10.4",
            "unit: \"%\"\n    values: {h1: 10.1, h2: 10.4",
        );
        let p = uncertainty_paragraph(&fixture::assess(&text));
        assert!(
            p.contains("drag is (10.100 ± 0.110) % (relative U 1.09 %), with observed order"),
            "{p}"
        );
    }

    #[test]
    fn oscillation_is_named_after_stern() {
        // φ = 1.0, 0.99, 1.02 on h = 1, 1.5, 2.25: oscillatory, half range 0.015 above the GCI
        // (the three-mesh unit test's analytic case; Stern et al. 2001 for the half range).
        let text = "format: 1
title: oscillating
meshes:
  - {name: F, size: 1.0}
  - {name: M, size: 1.5}
  - {name: C, size: 2.25}
quantities:
  lift:
    values: {F: 1.0, M: 0.99, C: 1.02}
";
        let p = uncertainty_paragraph(&fixture::assess(text));
        assert!(
            p.contains(" Where the solutions oscillate, U is half the range of the solutions, after Stern et al. (2001). "),
            "{p}"
        );
        assert!(
            p.ends_with("On the finest mesh, lift is 1.0000 ± 0.0150 (1.50 %), with oscillatory convergence, U being half the range of the solutions."),
            "{p}"
        );
    }

    #[test]
    fn sweep_breakdowns_and_band_are_stated_with_the_assessments_figures() {
        let a = fixture::assess(fixture::DEMO);
        let p = uncertainty_paragraph(&a);
        let s = &a.sweeps[0];
        let b = &s.breakdown[0];
        let stmt = |q: &QuantityResult| {
            let u = q
                .uncertainty
                .as_ref()
                .expect("the demo breakdown converges");
            let tg = &q.three_grid.as_ref().expect("three meshes").estimate;
            let g = q.governing.as_ref().expect("governed");
            let (v, au) = with_uncertainty(u.value, u.absolute);
            format!(
                "{v} ± {au} ({}), with observed order p = {}, safety factor Fs = {} by the correction factor (Stern et al. 2001) and monotonic convergence",
                percent(u.relative.expect("nonzero")),
                sig(tg.observed_order.expect("an order"), 4),
                num(g.safety_factor.expect("a factor"), 3)
            )
        };
        let want = format!(
            "In sweep cav, the breakdown for a 1.00 % drop of efficiency below the plateau mean (σ ≥ 0.3) lies at σ_b = {}; its reference η is {}.",
            stmt(&b.x_estimate),
            stmt(&b.reference_estimate)
        );
        assert!(p.contains(&want), "{want}\n{p}");
        let sm = &s.band.as_ref().expect("a band").summary;
        let want = format!(
            "Along sweep cav, the band of efficiency over {} points has a relative U of {} on average and at most {} at σ = ",
            sm.points,
            percent(sm.mean_relative.expect("a mean")),
            percent(sm.max_relative.expect("a max"))
        );
        assert!(p.contains(&want), "{want}\n{p}");
        assert!(p.contains(
            "On the finest mesh, torque is 101 N m, but the solutions diverge with refinement: no discretisation uncertainty can be claimed."
        ));
        assert!(!p.contains('\n'));
        for s in p.replace("et al.", "et al").split(". ") {
            assert!(s.starts_with(char::is_uppercase), "{s}");
        }
    }

    #[test]
    fn least_squares_governs_with_five_meshes() {
        let a = fixture::assess(fixture::FIVE);
        let p = uncertainty_paragraph(&a);
        let q = &a.quantities[0];
        let ls = q.least_squares.as_ref().expect("five meshes");
        let u = q.uncertainty.as_ref().expect("an uncertainty");
        assert_eq!(u.method, Method::LeastSquares);
        assert!(p.starts_with(
            "The discretisation uncertainty was estimated by the least-squares procedure of Eça and Hoekstra (2014) over all the meshes. "
        ), "{p}");
        assert!(p.contains(
            "Five meshes were used, finest first A, B, C, D and E with representative sizes h = 1, 1.3, 1.69, 2.2 and 2.86, refinement ratios r21 = 1.300, r32 = 1.300, r43 = 1.302 and r54 = 1.300."
        ), "{p}");
        let (v, au) = with_uncertainty(u.value, u.absolute);
        let want = format!(
            "On the finest mesh, head is {v} ± {au} m ({}), with ",
            percent(u.relative.expect("nonzero"))
        );
        assert!(p.contains(&want), "{want}\n{p}");
        let fs = format!("safety factor Fs = {}", num(ls.safety_factor, 3));
        assert!(p.contains(&fs), "{p}");
        assert!(p.contains(" least-squares fit"), "{p}");
    }

    /// Five meshes with ratio 1.21 and φ = 2 + 0.01 h^2.5 (analytic manufactured data, values
    /// rounded to 12 decimals): the published least-squares rules under-state the error of the
    /// finest mesh here (docs/method.md §5), so the order-2 floor sets U.
    const FLOORED: &str = "format: 1
title: order-two floor (manufactured)
meshes:
  - {name: A, size: 1.0}
  - {name: B, size: 1.21}
  - {name: C, size: 1.4641}
  - {name: D, size: 1.771561}
  - {name: E, size: 2.14358881}
quantities:
  head:
    unit: m
    values: {A: 2.01, B: 2.0161051, C: 2.025937424601, D: 2.041772481694, E: 2.067274999493}
";

    #[test]
    fn least_squares_sentence_names_the_floor_when_it_governs() {
        let a = fixture::assess(FLOORED);
        let q = &a.quantities[0];
        let ls = q.least_squares.as_ref().expect("five meshes");
        assert!(ls.floor_governs(), "the floor governs this case");
        let p = uncertainty_paragraph(&a);
        let fit = format!(
            "the {} {} least-squares fit",
            if ls.selected.weighted {
                "weighted"
            } else {
                "unweighted"
            },
            fit_phrase(ls.selected.kind)
        );
        let want = format!(
            "with U raised above the figure of {fit} (orders 1 and 2) to the order-2 floor, the Richardson estimate of the two finest meshes with order 2 and safety factor Fs = 3, and monotonic convergence over all the meshes."
        );
        assert_eq!(ls.selected.kind, FitKind::FirstSecond);
        assert!(p.contains(&want), "{want}\n{p}");
        // the free order (about 2.5) is not quoted when another fit governs
        assert!(!p.contains("p = "), "{p}");
    }

    #[test]
    fn least_squares_sentence_quotes_the_free_order_only_for_the_free_fit() {
        // φ = 2 + 0.01 h^1.6 on ratio 1.3 (analytic manufactured data): the free fit governs
        let text = FLOORED
            .replace("1.21}", "1.3}")
            .replace("1.4641}", "1.69}")
            .replace("1.771561}", "2.197}")
            .replace("2.14358881}", "2.8561}")
            .replace(
                "{A: 2.01, B: 2.0161051, C: 2.025937424601, D: 2.041772481694, E: 2.067274999493}",
                "{A: 2.01, B: 2.015216310567, C: 2.023153610727, D: 2.035231253156, E: 2.053608968969}",
            );
        let a = fixture::assess(&text);
        let ls = a.quantities[0].least_squares.as_ref().expect("five meshes");
        assert_eq!(ls.selected.kind, FitKind::Free);
        assert!(ls.guard.is_none());
        let p = uncertainty_paragraph(&a);
        let want = format!(
            "least-squares fit of observed order p = {}, safety factor Fs = 1.25 and monotonic convergence over all the meshes.",
            sig(ls.order.expect("an order"), 4)
        );
        assert!(p.contains(&want), "{want}\n{p}");
        assert!(p.contains("p = 1.600"), "{p}");
    }

    #[test]
    fn wording_helpers() {
        assert_eq!(and_list(&[]), "");
        assert_eq!(and_list(&["a".into()]), "a");
        assert_eq!(and_list(&["a".into(), "b".into()]), "a and b");
        assert_eq!(
            and_list(&["a".into(), "b".into(), "c".into()]),
            "a, b and c"
        );
        assert_eq!(ratio_name(2), "r21");
        assert_eq!(ratio_name(11), "r11,10");
        assert_eq!(count_word(3), "Three");
        assert_eq!(count_word(12), "12");
        assert_eq!(unit_suffix(Some("-")), "");
        assert_eq!(unit_suffix(Some("N m")), " N m");
        assert_eq!(unit_suffix(None), "");
    }
}
