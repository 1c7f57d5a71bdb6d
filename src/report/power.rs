//! The planning answer of `plateau power` in words and tables for the terminal.

use crate::analysis::power::{PowerAnalysis, PowerGap, ResponsePower};

use super::format::fixed;

/// A planning number with four significant figures.
pub fn number(v: f64) -> String {
    // Four significant figures: the precision a planning estimate deserves (the chapter's rule).
    super::format::sig(v, 4)
}

/// A power as a percentage (`> 99.9 %` near 1).
pub fn percent(p: f64) -> String {
    if p > 0.999 {
        "> 99.9 %".into()
    } else {
        format!("{} %", fixed(100.0 * p, 1))
    }
}

fn df_text(df: f64) -> String {
    if df.fract() == 0.0 {
        format!("{df:.0}")
    } else {
        number(df)
    }
}

/// One paragraph and one table per response.
pub fn text(p: &PowerAnalysis) -> String {
    let mut out = format!(
        "power to detect the declared limit, and the minimum detectable effect (MDE) at {} power; {} two-level runs planned\n",
        percent(p.target),
        p.planned_runs
    );
    for r in &p.responses {
        out.push_str(&response_text(r, p.target));
    }
    out
}

fn response_text(r: &ResponsePower, target: f64) -> String {
    let unit = r
        .unit
        .as_deref()
        .map(|u| format!(" {u}"))
        .unwrap_or_default();
    let mut out = format!("\n{} [{}]\n", r.name, r.id);
    let Some(prec) = &r.precision else {
        out.push_str("  no precision: declare a precision rule, or `planning: { sd: ... }` under the response\n");
        return out;
    };
    out.push_str(&format!(
        "  s = {}{unit} per determination ({}{}), {} determination{} per run, α = {}\n",
        number(prec.s),
        if prec.from == "precision-rule" {
            "precision rule"
        } else {
            "planning estimate"
        },
        match prec.df {
            Some(df) => format!(", {} df", df_text(df)),
            None => ", taken as known".into(),
        },
        prec.determinations,
        if prec.determinations == 1 { "" } else { "s" },
        r.alpha
    ));
    if let (Some(se), Some(mde)) = (r.se, r.mde) {
        out.push_str(&format!(
            "  planned design: SE(E) = {}{unit}, MDE = {}{unit}",
            number(se),
            number(mde)
        ));
        match (r.limit, r.power) {
            (Some(l), Some(pw)) => out.push_str(&format!(
                ", power to detect the limit {}{unit}: {}{}\n",
                number(l),
                percent(pw),
                if pw < target {
                    " — below the target: the design may call a relevant effect negligible"
                } else {
                    ""
                }
            )),
            _ => out.push('\n'),
        }
    }
    for g in &r.gaps {
        match g {
            PowerGap::NoExpectedLevel => out.push_str("  the percent limit needs an expected level (`planning: { level: ... }`) to be turned into response units\n"),
            PowerGap::NoLimit => out.push_str("  no effect limit declared: only the MDE is given\n"),
            PowerGap::NoPrecision => {}
        }
    }
    out.push_str(&format!(
        "  {:<22} {:>6} {:>5} {:>12} {:>12} {:>8}\n",
        "design", "runs", "res.", "SE(E)", "MDE", "power"
    ));
    for c in &r.candidates {
        out.push_str(&format!(
            "  {:<22} {:>6} {:>5} {:>12} {:>12} {:>8}{}\n",
            c.kind,
            c.runs,
            c.resolution
                .map(crate::design::catalogue::roman)
                .unwrap_or_default(),
            number(c.se),
            number(c.mde),
            c.power.map(percent).unwrap_or_else(|| "–".into()),
            if c.planned { "  ← planned" } else { "" }
        ));
    }
    out
}

/// Warnings for `check`: responses whose planned design has less than the target power to
/// detect the declared limit.
pub fn warnings(p: &PowerAnalysis) -> Vec<String> {
    p.responses
        .iter()
        .filter_map(|r| {
            let pw = r.power?;
            (pw < p.target).then(|| {
                let unit = r.unit.as_deref().map(|u| format!(" {u}")).unwrap_or_default();
                format!(
                    "response `{}`: the design detects an effect as large as the limit ({}{unit}) with only {} power (target {}); the minimum detectable effect is {}{unit}\nhint: `plateau power` compares designs; more runs, replicates or determinations lower it",
                    r.id,
                    number(r.limit.unwrap_or(f64::NAN)),
                    percent(pw),
                    percent(p.target),
                    number(r.mde.unwrap_or(f64::NAN))
                )
            })
        })
        .collect()
}
