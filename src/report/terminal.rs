//! The effects tables as plain text for the terminal (`plateau analyze`); part of the report
//! layer because it words the verdicts.

use crate::pipeline::Evaluated;
use crate::report::conclusion::{limit_text, sentences};
use crate::report::format::{fixed, percent_effect};
use crate::report::judging;

/// One table per response with both verdicts, then the conclusion.
pub fn tables(evaluated: &Evaluated) -> String {
    let mut out = String::new();
    let a = &evaluated.analysis;
    out.push_str(&format!(
        "study {}: {}\ndesign: {}, {} runs ({} two-level, {} nominal)\n",
        a.study.id,
        a.study.title,
        a.design.kind,
        a.design.counts.runs,
        a.design.counts.two_level_runs,
        a.design.counts.center_points
    ));
    for r in &a.responses {
        let unit = r.unit.as_deref().unwrap_or("");
        let j = judging::build(&evaluated.study, r);
        out.push_str(&format!(
            "\n{} [{}]{}{}\n  reference ({}): {}\n  acceptance: {}\n",
            r.name,
            r.id,
            if unit.is_empty() {
                String::new()
            } else {
                format!(" ({unit})")
            },
            if r.role == "suitability" {
                ", suitability response"
            } else {
                ""
            },
            r.reference_kind,
            fixed(r.reference, r.decimals + 1),
            limit_text(r).unwrap_or_else(|| "no effect limit declared".into())
        ));
        for c in &j.criteria {
            out.push_str(&format!("  statistical: {c}\n"));
        }
        let width = r
            .effects
            .iter()
            .map(|e| e.label.chars().count())
            .max()
            .unwrap_or(4)
            .max(4);
        out.push_str(&format!(
            "  {:<width$}  {:>12}  {:>10}  {:>8}",
            "term", "effect", "% effect", "relevant"
        ));
        for c in &j.columns {
            out.push_str(&format!("  {c:>15}"));
        }
        out.push('\n');
        for (i, e) in r.effects.iter().enumerate() {
            let pad = width.saturating_sub(e.label.chars().count());
            out.push_str(&format!(
                "  {}{}  {:>12}  {:>10}  {:>8}",
                e.label,
                " ".repeat(pad),
                fixed(e.effect, r.decimals + 1),
                percent_effect(e.percent),
                match e.relevant {
                    Some(true) => "yes",
                    Some(false) => "no",
                    None => "-",
                }
            ));
            for c in j.cells.get(i).into_iter().flatten() {
                out.push_str(&format!("  {c:>15}"));
            }
            out.push('\n');
        }
        for line in [&j.curvature, &j.drift, &j.worst_case]
            .into_iter()
            .flatten()
        {
            out.push_str(&format!("  {line}\n"));
        }
        for row in &j.ranges {
            out.push_str(&format!(
                "  operating range: {} {} ({}; tested {})\n",
                row[0], row[2], row[1], row[3]
            ));
        }
        for n in &j.notes {
            out.push_str(&format!("  note: {n}\n"));
        }
    }
    out.push_str("\nconclusion:\n");
    for s in sentences(&evaluated.study, a) {
        out.push_str(&format!("  {s}\n"));
    }
    out
}
