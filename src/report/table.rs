//! Tables for people, built with comfy-table. Only formats the assessment.

use super::format::{
    class_label, governing_label, not_demonstrated, num, opt, opt_percent, orders, percent, places,
    point_class_label, points_of, sig, with_uncertainty,
};
use super::Exporter;
use crate::assess::{Assessment, Method, QuantityResult};
use crate::point_warnings::PointWarning;
use comfy_table::{presets, CellAlignment, ContentArrangement, Table as Grid, TableComponent};

/// Human-readable tables.
pub struct Table;

fn grid(headers: &[&str]) -> Grid {
    let mut t = Grid::new();
    t.load_preset(presets::NOTHING)
        .set_style(TableComponent::HeaderLines, '─')
        .set_style(TableComponent::MiddleHeaderIntersections, '─')
        .set_style(TableComponent::LeftHeaderIntersection, ' ')
        .set_style(TableComponent::RightHeaderIntersection, ' ')
        .set_content_arrangement(ContentArrangement::Disabled)
        .set_header(headers.to_vec());
    for i in 1..headers.len() {
        if let Some(c) = t.column_mut(i) {
            c.set_cell_alignment(CellAlignment::Right);
        }
    }
    t
}

/// The aggregated warnings of the points of a band, comparison or field column: one row per
/// code, with how many points raised it and where (`show` words one place).
fn point_warnings_block<T>(
    list: &[PointWarning<T>],
    total: u64,
    label: &str,
    show: impl Fn(&T) -> String,
    out: &mut String,
) {
    if list.is_empty() {
        return;
    }
    let mut t = grid(&["warning at points", "points", label]);
    if let Some(c) = t.column_mut(2) {
        c.set_cell_alignment(CellAlignment::Left);
    }
    for w in list {
        t.add_row(vec![w.code.clone(), points_of(w, total), places(w, &show)]);
    }
    out.push_str(&format!("{t}\n"));
}

/// The one-line statement `value ± U (x.xx %)` with its class, or why there is none.
pub fn statement(q: &QuantityResult) -> String {
    if let Some(nc) = &q.not_computed {
        return nc.text();
    }
    let class = class_label(q);
    match &q.uncertainty {
        Some(u) if not_demonstrated(q) => {
            let rel = u
                .relative
                .map_or_else(|| "value is zero".to_string(), percent);
            let (_, a) = with_uncertainty(u.value, u.absolute);
            format!(
                "{} · {class} · no quotable uncertainty (the {} would give ± {a}, {rel})",
                q.values.first().map_or("–".into(), |v| num(*v, 8)),
                governing_label(q)
            )
        }
        Some(u) => {
            let how = governing_label(q);
            let rel = u
                .relative
                .map_or_else(|| "value is zero".to_string(), percent);
            // In percent, the relative U is named so that it is not read as the unit again.
            let rel = if q.unit.as_deref().map(str::trim) == Some("%") {
                format!("relative U {rel}")
            } else {
                rel
            };
            let (v, a) = with_uncertainty(u.value, u.absolute);
            format!("{v} ± {a} ({rel}) · {class} · from the {how}")
        }
        None => format!(
            "{} · {class} · no discretisation uncertainty can be claimed",
            q.values.first().map_or("–".into(), |v| num(*v, 8))
        ),
    }
}

fn quantity_block(a: &Assessment, q: &QuantityResult, out: &mut String) {
    let unit = q
        .unit
        .as_deref()
        .map_or(String::new(), |u| format!(" [{u}]"));
    out.push_str(&format!("\n{}{unit}\n  {}\n", q.name, statement(q)));
    let mut t = grid(&["mesh", "value", "Δ to next finer"]);
    for (i, (m, v)) in q.meshes.iter().zip(&q.values).enumerate() {
        let change = if i == 0 {
            "–".to_string()
        } else {
            sig(v - q.values[i - 1], 4)
        };
        t.add_row(vec![m.clone(), num(*v, 8), change]);
    }
    out.push_str(&format!("{t}\n"));
    if let Some(tg) = &q.three_grid {
        let e = &tg.estimate;
        let mut t = grid(&[
            &format!("three-mesh figures ({})", tg.meshes.join(", ")),
            "",
        ]);
        let rows: Vec<(&str, String)> = vec![
            ("convergence ratio R = ε21/ε32", opt(e.convergence_ratio, 4)),
            ("observed order p", opt(e.observed_order, 4)),
            ("extrapolated value φ_ext21", opt(e.extrapolated, 7)),
            ("relative change e_a21", opt_percent(e.approx_rel_error)),
            (
                "extrapolated error e_ext21",
                opt_percent(e.extrap_rel_error),
            ),
            ("GCI fine (21)", opt_percent(e.gci_fine)),
            ("GCI coarse (32)", opt_percent(e.gci_coarse)),
            (
                "half range of the three values",
                sig(e.oscillation_half_range, 4),
            ),
            ("safety factor of the GCI", sig(e.safety_factor, 3)),
        ];
        for (k, v) in rows {
            t.add_row(vec![k.to_string(), v]);
        }
        out.push_str(&format!("{t}\n"));
    }
    rules_block(q, out);
    histories_block(q, out);
    if let Some(ls) = &q.least_squares {
        least_squares_block(a, q, ls, out);
    }
}

/// Each mesh's monitor history: where its steady part starts, its value and the uncertainty
/// the history carries.
fn histories_block(q: &QuantityResult, out: &mut String) {
    if q.histories.is_empty() {
        return;
    }
    let mut t = grid(&[
        "monitor history",
        "samples",
        "steady from",
        "value",
        "U stat. (95 %)",
        "half range",
        "drift",
        "U_I",
        "mean's status",
    ]);
    for h in &q.histories {
        let r = &h.result;
        t.add_row(vec![
            h.mesh.clone(),
            r.samples.to_string(),
            r.steady
                .start_at
                .map_or_else(|| r.steady.start_index.to_string(), |x| num(x, 8)),
            num(r.value, 8),
            opt(r.statistical.as_ref().map(|s| s.expanded), 3),
            opt(r.iterative.as_ref().map(|i| i.half_range), 3),
            opt(r.iterative.as_ref().map(|i| i.drift), 3),
            opt(h.iterative_uncertainty, 3),
            if r.reduction == crate::history::Reduction::Mean {
                match r.status {
                    crate::history::Status::Steady => "steady",
                    crate::history::Status::TooShort => "too short",
                    crate::history::Status::NoSteadyPart => "no steady part",
                }
            } else {
                "value not a mean"
            }
            .to_string(),
        ]);
    }
    out.push_str(&format!("{t}\n"));
}

/// Every published rule on the same meshes, side by side, the governing one marked.
fn rules_block(q: &QuantityResult, out: &mut String) {
    if q.rules.is_empty() {
        return;
    }
    let governing = q
        .governing
        .as_ref()
        .filter(|g| g.method != Method::LeastSquares)
        .and_then(|g| g.three_mesh_rule);
    let mut t = grid(&[
        "published rules",
        "U",
        "U/|φ1|",
        "Fs",
        "order",
        "branch",
        "",
    ]);
    for r in &q.rules {
        t.add_row(vec![
            r.rule.title().to_string(),
            opt(r.uncertainty, 4),
            opt_percent(r.relative),
            opt(r.safety_factor, 3),
            opt(r.order, 4),
            r.branch.label().to_string(),
            if governing == Some(r.rule) {
                "governs"
            } else {
                ""
            }
            .to_string(),
        ]);
    }
    out.push_str(&format!("{t}\n"));
}

fn least_squares_block(
    a: &Assessment,
    q: &QuantityResult,
    ls: &crate::estimate::least_squares::LeastSquares,
    out: &mut String,
) {
    // The estimate that governed, when it gave an uncertainty.
    let governing = q
        .governing
        .as_ref()
        .filter(|g| g.absolute.is_some())
        .map(|g| g.method);
    let tg = q.three_grid.as_ref().map(|t| &t.estimate);
    let tg_head = q.three_grid.as_ref().map_or("three-mesh".to_string(), |t| {
        format!("three-mesh ({})", t.meshes.join(", "))
    });
    let ls_head = format!("least squares ({} meshes)", ls.per_mesh.len());
    let mut t = grid(&["both estimates", &tg_head, &ls_head]);
    let selected = ls.selected_fit();
    let mark = |m: bool| if m { "governs" } else { "" };
    let rows: Vec<(&str, String, String)> = vec![
        (
            "class",
            tg.map_or("–".into(), |e| e.convergence.label().to_string()),
            ls.convergence.label().to_string(),
        ),
        (
            "observed order",
            opt(tg.and_then(|e| e.observed_order), 4),
            opt(ls.order, 4),
        ),
        (
            "extrapolated value",
            opt(tg.and_then(|e| e.extrapolated), 7),
            opt(selected.map(|f| f.phi0), 7),
        ),
        (
            "uncertainty U of the finest mesh",
            opt(tg.and_then(|e| e.uncertainty), 4),
            opt(ls.per_mesh.first().map(|m| m.uncertainty), 4),
        ),
        (
            "safety factor",
            opt(tg.map(|e| e.safety_factor), 3),
            sig(ls.safety_factor, 3),
        ),
        (
            "fit",
            "Richardson, three points".into(),
            format!(
                "{}{}",
                ls.selected.kind.label(),
                if ls.selected.weighted {
                    ", weighted"
                } else {
                    ", unweighted"
                }
            ),
        ),
        (
            "",
            mark(matches!(
                governing,
                Some(Method::ThreeGrid | Method::OscillationRange)
            ))
            .into(),
            mark(governing == Some(Method::LeastSquares)).into(),
        ),
    ];
    for (k, x, y) in rows {
        t.add_row(vec![k.to_string(), x, y]);
    }
    out.push_str(&format!("{t}\n"));
    if a.warnings
        .iter()
        .any(|w| w.code == "estimates_disagree" && w.subject.as_deref() == Some(q.name.as_str()))
    {
        out.push_str(
            "  The two estimates differ by more than a factor of two: the finest meshes are \
             probably not in the asymptotic range, and neither figure should be quoted alone.\n",
        );
    }
    out.push_str(&format!(
        "  class from {}; data range Δφ = {}, error estimate ε = {}\n",
        ls.convergence_basis,
        sig(ls.data_range, 4),
        sig(ls.error_estimate, 4)
    ));
    let mut t = grid(&["mesh", "value", "selected fit", "U (least squares)"]);
    for (m, v) in ls.per_mesh.iter().zip(&q.values) {
        t.add_row(vec![
            m.mesh.clone(),
            num(*v, 8),
            sig(m.fit, 7),
            sig(m.uncertainty, 4),
        ]);
    }
    out.push_str(&format!("{t}\n"));
    let mut t = grid(&[
        "candidate fit",
        "weighting",
        "φ0",
        "order",
        "std. deviation",
    ]);
    for f in &ls.fits {
        t.add_row(vec![
            f.kind.label().to_string(),
            if f.weighted { "1/h weights" } else { "equal" }.to_string(),
            sig(f.phi0, 7),
            opt(f.order, 4),
            sig(f.std_dev, 3),
        ]);
    }
    out.push_str(&format!("{t}\n"));
}

/// The usual symbol of a quantity name in hydraulic machinery, or the name itself.
pub fn symbol(name: &str) -> &str {
    match name {
        "sigma" => "σ",
        "efficiency" => "η",
        "head" => "H",
        "npsh" => "NPSH",
        other => other,
    }
}

/// The breakdown subscript on an abscissa's symbol, before a unit in brackets when the name
/// carries one: `σ` → `σ_b`, `NPSH [m]` → `NPSH_b [m]`.
pub fn subscript_b(symbol: &str) -> String {
    match symbol
        .trim_end()
        .strip_suffix(']')
        .and_then(|s| s.rsplit_once(" ["))
    {
        Some((name, unit)) => format!("{name}_b [{unit}]"),
        None => format!("{symbol}_b"),
    }
}

/// Describes a breakdown rule in words (`x`: the sweep's abscissa; a breakdown read against
/// another abscissa, NPSH, says so).
pub fn breakdown_rule(b: &crate::assess::sweep::BreakdownResult, x: &str) -> String {
    use crate::sweep::ReferenceKind;
    let against = if b.abscissa == x {
        String::new()
    } else {
        format!(", read against {}", symbol(&b.abscissa))
    };
    let x = b.abscissa.as_str();
    let drop = if b.relative {
        format!("{} drop", percent(b.drop))
    } else {
        format!("drop of {}", num(b.drop, 6))
    };
    let reference = match b.reference_rule {
        ReferenceKind::Plateau { from } => {
            format!("the plateau mean ({} ≥ {})", symbol(x), num(from, 6))
        }
        ReferenceKind::Highest => format!("the value at the highest {}", symbol(x)),
        ReferenceKind::Value(v) => format!("the given value {}", num(v, 8)),
    };
    format!("{drop} of {} below {reference}{against}", b.response)
}

/// The per-mesh breakdowns in the sweep's mesh order (finest first): a mesh's breakdown, or
/// why it could not be read.
pub fn per_mesh_rows<'a>(
    s: &'a crate::assess::sweep::SweepResult,
    b: &'a crate::assess::sweep::BreakdownResult,
) -> Vec<Result<&'a crate::assess::sweep::MeshBreakdown, &'a crate::assess::partial::MeshNotComputed>>
{
    s.meshes
        .iter()
        .filter_map(|name| {
            b.per_mesh
                .iter()
                .find(|m| &m.mesh == name)
                .map(Ok)
                .or_else(|| {
                    b.per_mesh_not_computed
                        .iter()
                        .find(|m| &m.mesh == name)
                        .map(Err)
                })
        })
        .collect()
}

fn sweep_block(s: &crate::assess::sweep::SweepResult, out: &mut String) {
    out.push_str(&format!(
        "\nsweep {} — {} along {}, {} interpolation, meshes {}{}\n",
        s.name,
        s.responses.join(", "),
        s.x,
        s.interpolation.label(),
        s.meshes.join(", "),
        s.mode.map_or(String::new(), |m| format!(
            ", derived from raw monitors in {} mode",
            m.label()
        ))
    ));
    for b in &s.breakdown {
        out.push_str(&format!("\n  breakdown: {}\n", breakdown_rule(b, &s.x)));
        out.push_str(&format!(
            "    {} = {}\n",
            subscript_b(symbol(&b.abscissa)),
            statement(&b.x_estimate)
        ));
        out.push_str(&format!(
            "    reference {} = {}\n",
            symbol(&b.response),
            statement(&b.reference_estimate)
        ));
        let mut t = grid(&[
            "mesh",
            "reference",
            "threshold",
            &format!("breakdown {}", b.abscissa),
        ]);
        for row in per_mesh_rows(s, b) {
            t.add_row(match row {
                Ok(m) => vec![
                    m.mesh.clone(),
                    sig(m.reference, 6),
                    sig(m.threshold, 6),
                    sig(m.x, 5),
                ],
                Err(m) => vec![
                    m.mesh.clone(),
                    opt(m.reference, 6),
                    "–".into(),
                    format!("not computed: {}", m.reason),
                ],
            });
        }
        out.push_str(&format!("{t}\n"));
    }
    if let Some(nc) = s.band.as_ref().and_then(|b| b.not_computed.as_ref()) {
        let band = s.band.as_ref().map_or("", |b| b.response.as_str());
        out.push_str(&format!(
            "\n  band of {band} along {}: {}\n",
            s.x,
            nc.text()
        ));
    } else if let Some(band) = &s.band {
        if !band.points_outside_range.is_empty() {
            out.push_str(&format!(
                "\n  band of {}: {} = {} outside the range common to all meshes, not computed there\n",
                band.response,
                s.x,
                band.points_outside_range.iter().map(|x| num(*x, 6)).collect::<Vec<_>>().join(", ")
            ));
        }
        let sm = &band.summary;
        out.push_str(&format!(
            "\n  band of {} along {} ({} points, {} interpolation): {} monotonic, {} oscillatory, {} divergent; \
             mean relative U {}, largest {}{}; observed order {}\n",
            band.response,
            s.x,
            sm.points,
            band.interpolation.label(),
            percent(sm.share_monotonic),
            percent(sm.share_oscillatory),
            percent(sm.share_divergent),
            opt_percent(sm.mean_relative),
            opt_percent(sm.max_relative),
            sm.max_relative_at.map_or(String::new(), |x| format!(" at {} = {}", s.x, num(x, 6))),
            orders(sm.mean_order, sm.median_order, sm.order_points as u64),
        ));
        if let (Some(v), false) = (sm.variation, sm.wider_than_variation.is_empty()) {
            out.push_str(&format!(
                "  band wider than the curve at {} of {} points: U exceeds the variation of {} along the band ({}), so no conclusion about the curve's shape there (warning {})\n",
                sm.wider_than_variation.len(),
                sm.points,
                band.response,
                sig(v, 3),
                crate::warning::BAND_WIDER_THAN_VARIATION
            ));
        }
        let noisy = band.points.iter().any(|p| p.iterative.is_some());
        let mut head = vec![s.x.as_str(), "value", "± U", "lower", "upper", "class"];
        if noisy {
            head.insert(3, "U_I (history)");
        }
        let mut t = grid(&head);
        let n = band.points.len();
        let step = n.div_ceil(16).max(1);
        for (i, p) in band.points.iter().enumerate() {
            if i % step != 0 && i + 1 != n {
                continue;
            }
            let mut row = vec![
                num(p.x, 6),
                sig(p.value, 6),
                opt(p.absolute, 3),
                opt(p.lower, 6),
                opt(p.upper, 6),
                point_class_label(p).to_string(),
            ];
            if noisy {
                row.insert(3, opt(p.iterative, 3));
            }
            t.add_row(row);
        }
        out.push_str(&format!("{t}\n"));
        if step > 1 {
            out.push_str(&format!(
                "  every {} point shown; all {n} are in the JSON and CSV outputs\n",
                super::format::ordinal(step)
            ));
        }
        point_warnings_block(
            &band.point_warnings,
            n as u64,
            &format!("at {}", s.x),
            |x| num(*x, 6),
            out,
        );
    }
}

fn comparison_block(
    a: &Assessment,
    c: &crate::assess::compare::ComparisonResult,
    out: &mut String,
) {
    let cm = &c.comparison;
    let x = a.sweep_x(&c.name);
    out.push_str(&format!(
        "\n{}: {}{} (ASME V&V 20; k = {}, {}){}\n",
        c.origin.heading().to_lowercase(),
        c.name,
        c.response
            .as_ref()
            .map_or(String::new(), |r| format!(", {r} along {x}")),
        num(cm.coverage_factor, 4),
        super::format::u_num_phrase(cm.divisor),
        if cm.normalised {
            "; each data set divided by its own peak — a comparison of shapes, not levels"
        } else {
            ""
        }
    ));
    if let Some(nc) = &c.not_computed {
        out.push_str(&format!("  {}\n", nc.text()));
        return;
    }
    if !c.points_outside_range.is_empty() {
        out.push_str(&format!(
            "  {} at {x} = {} lie outside the range common to all meshes: not computed there\n",
            match c.origin {
                crate::study::reference::Origin::Measurement => "measured points",
                crate::study::reference::Origin::Benchmark => "reference points",
            },
            c.points_outside_range
                .iter()
                .map(|v| num(*v, 6))
                .collect::<Vec<_>>()
                .join(", ")
        ));
    }
    let mut t = grid(&[
        x,
        "S",
        "D",
        "E = S − D",
        "u_num",
        "u_D",
        "u_val",
        "|E| ≤ k u_val",
    ]);
    for p in &cm.points {
        t.add_row(vec![
            if c.kind == "sweep" {
                num(p.x, 6)
            } else {
                "–".into()
            },
            sig(p.simulation, 6),
            sig(p.measured, 6),
            sig(p.error, 3),
            opt(p.u_num, 3),
            sig(p.u_measured, 3),
            opt(p.u_val, 3),
            match p.within {
                None => "undecided (no u_num)",
                Some(false) => "no",
                Some(true) if c.carried_by_u_num.contains(&p.x) => "yes, by u_num",
                Some(true) => "yes",
            }
            .to_string(),
        ]);
    }
    out.push_str(&format!("{t}\n"));
    if !c.carried_by_u_num.is_empty() {
        out.push_str(&format!(
            "  agreement carried by u_num at {} of {} points: without u_num they would not agree, so no conclusion (warning {})\n",
            c.carried_by_u_num.len(),
            cm.summary.points,
            crate::warning::COMPARISON_CARRIED_BY_U_NUM
        ));
    }
    out.push_str(&format!(
        "  {} of {} points with |E| ≤ k·u_val; largest |E| {}{}; mean E {}\n",
        cm.summary.within,
        cm.summary.points,
        sig(cm.summary.max_abs_error, 3),
        if c.kind == "sweep" {
            format!(" at {x} = {}", num(cm.summary.max_abs_error_at, 6))
        } else {
            String::new()
        },
        sig(cm.summary.mean_error, 3)
    ));
    if c.kind == "sweep" {
        out.push_str(&format!(
            "  observed order of the pointwise estimates: {}\n",
            orders(c.mean_order, c.median_order, c.order_points as u64)
        ));
    }
    point_warnings_block(
        &c.point_warnings,
        cm.points.len() as u64,
        &format!("at {x}"),
        |v| num(*v, 6),
        out,
    );
}

fn field_block(f: &crate::field::FieldSummary, out: &mut String) {
    out.push_str(&format!(
        "\nfield {} — {} {}{}\n",
        f.name,
        f.points,
        super::field_line::place_word(f),
        f.written.as_ref().map_or(String::new(), |w| format!(
            "; per-point results written to {w}"
        ))
    ));
    let mut t = grid(&[
        "column",
        "monotonic",
        "oscillatory",
        "divergent",
        "no change",
        "mean order",
        "median order",
        "mean U/|φ|",
        "largest U/|φ|",
    ]);
    for c in &f.columns {
        t.add_row(vec![
            c.name.clone(),
            c.classes.monotonic.to_string(),
            c.classes.oscillatory.to_string(),
            c.classes.divergent.to_string(),
            c.classes.no_change.to_string(),
            opt(c.mean_order, 3),
            opt(c.median_order, 3),
            opt_percent(c.mean_relative),
            opt_percent(c.max_relative),
        ]);
    }
    out.push_str(&format!("{t}\n"));
    out.push_str(
        "  orders: over the points whose convergence is demonstrated (orders on a search bound, \
         not found or not demonstrated left out)\n",
    );
    for l in super::field_line::extra_lines(f) {
        out.push_str(&format!("  {l}\n"));
    }
    for c in &f.columns {
        if !c.point_warnings.is_empty() {
            out.push_str(&format!("  column {}\n", c.name));
        }
        point_warnings_block(
            &c.point_warnings,
            f.points,
            &format!("at {}", super::field_line::place_word(f)),
            String::clone,
            out,
        );
    }
}

impl Exporter for Table {
    fn export(&self, a: &Assessment) -> Vec<u8> {
        let mut out = String::new();
        out.push_str(&format!(
            "{}\n{}\n",
            a.title,
            "═".repeat(a.title.chars().count().max(8))
        ));
        out.push_str(&format!("study file: {}\n", a.study));
        if a.files_read.len() > 1 {
            out.push_str(&format!("files read: {}\n", a.files_read[1..].join(", ")));
        }
        if !a.files_written.is_empty() {
            out.push_str(&format!("files written: {}\n", a.files_written.join(", ")));
        }
        out.push('\n');
        let mut t = grid(&["mesh", "cells", "h", "ratio to finer"]);
        for m in &a.meshes {
            t.add_row(vec![
                m.name.clone(),
                m.cells.map_or("–".into(), |c| num(c, 8)),
                num(m.size, 5),
                opt(m.ratio, 4),
            ]);
        }
        let basis = match a.size_basis {
            crate::grid::SizeBasis::Relative => format!(
                "h relative to the finest mesh, (N1/N)^(1/{}) from the cell counts",
                a.dimension
            ),
            crate::grid::SizeBasis::Absolute => "h absolute, as given".to_string(),
        };
        out.push_str(&format!(
            "meshes, finest first; {basis}; dimension {}\n{t}\n",
            a.dimension
        ));
        for q in &a.quantities {
            quantity_block(a, q, &mut out);
        }
        for s in &a.sweeps {
            sweep_block(s, &mut out);
        }
        super::duty::text(&a.duty_curves, &mut out);
        for c in &a.comparisons {
            comparison_block(a, c, &mut out);
        }
        for f in &a.fields {
            field_block(f, &mut out);
        }
        if !a.warnings.is_empty() {
            out.push_str("\nwarnings\n");
            for w in &a.warnings {
                out.push_str(&format!("  ! [{}] {}\n", w.code, w.message));
            }
        }
        out.push_str(&format!("\ncaution: {}\n", a.caution));
        out.into_bytes()
    }
}
