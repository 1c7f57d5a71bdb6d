//! The effects tables as plain text for the terminal (`plateau analyze`).

use crate::pipeline::Evaluated;
use crate::report::conclusion::{PERCENT_DECIMALS, limit_text};
use crate::report::format::fixed;

/// One table per response, then the verdicts.
pub fn tables(evaluated: &Evaluated) -> String {
    let mut out = String::new();
    let a = &evaluated.analysis;
    out.push_str(&format!(
        "study {}: {}\ndesign: {}, {} runs ({} two-level, {} nominal)\n",
        a.study.id,
        a.study.title,
        a.design.kind,
        a.design.runs,
        a.design.two_level_runs,
        a.design.center_points
    ));
    for r in &a.responses {
        let unit = r.unit.as_deref().unwrap_or("");
        out.push_str(&format!(
            "\n{} [{}]{}\n  reference ({}): {}\n  criterion: {}\n",
            r.name,
            r.id,
            if unit.is_empty() { String::new() } else { format!(" ({unit})") },
            r.reference_kind,
            fixed(r.reference, r.decimals + 1),
            limit_text(r).unwrap_or_else(|| "none declared".into())
        ));
        let width = r
            .effects
            .iter()
            .map(|e| e.label.chars().count())
            .max()
            .unwrap_or(4)
            .max(4);
        out.push_str(&format!(
            "  {:<width$}  {:>12}  {:>10}  relevant\n",
            "term", "effect", "% effect"
        ));
        for e in &r.effects {
            let pad = width.saturating_sub(e.label.chars().count());
            out.push_str(&format!(
                "  {}{}  {:>12}  {:>10}  {}\n",
                e.label,
                " ".repeat(pad),
                fixed(e.effect, r.decimals + 1),
                fixed(e.percent, PERCENT_DECIMALS),
                match e.relevant {
                    Some(true) => "yes",
                    Some(false) => "no",
                    None => "-",
                }
            ));
        }
        out.push_str(&format!(
            "  verdict: {}\n",
            match r.verdict.robust {
                None => "no criterion declared".to_string(),
                Some(true) => "no relevant main effect".to_string(),
                Some(false) => format!("relevant main effects: {}", r.verdict.relevant_factors.join(", ")),
            }
        ));
    }
    out
}
