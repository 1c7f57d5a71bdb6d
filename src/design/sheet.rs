//! The run sheet: the table a laboratory works from, in run order, with one empty column per
//! response, which `results: file:` reads back unchanged once filled in.

use crate::study::{Setting, Study};

use super::Design;

/// Whether settings are printed in real units or coded levels.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Levels {
    /// Real units (numbers and level names).
    Real,
    /// −1, 0, +1.
    Coded,
}

/// The first header cell of the run sheet (how `--force` recognises an earlier sheet).
pub const FIRST_COLUMN: &str = "run";

/// The header and rows of the run sheet, in run order.
pub fn rows(study: &Study, design: &Design, levels: Levels) -> (Vec<String>, Vec<Vec<String>>) {
    let mut header = vec![FIRST_COLUMN.to_string(), "order".to_string()];
    header.extend(study.factors.iter().map(|f| f.id.clone()));
    header.extend(study.responses.iter().map(|r| r.id.clone()));
    let rows = design
        .runs_in_order()
        .into_iter()
        .map(|run| {
            let mut row = vec![run.id.0.clone(), run.order.to_string()];
            for (f, c) in study.factors.iter().zip(&run.coded) {
                row.push(match levels {
                    Levels::Coded => c.to_string(),
                    Levels::Real => match f.setting(*c) {
                        Setting::Value(v) => v.to_string(),
                        Setting::Level(l) => l,
                    },
                });
            }
            row.extend(study.responses.iter().map(|_| String::new()));
            row
        })
        .collect();
    (header, rows)
}

/// The run sheet as JSON: one object per run in run order, with `run`, `order`, `nominal` and
/// the settings by factor id (numbers for numeric factors, level names otherwise).
pub fn json(study: &Study, design: &Design, levels: Levels) -> serde_json::Value {
    let runs: Vec<serde_json::Value> = design
        .runs_in_order()
        .into_iter()
        .map(|run| {
            let mut settings = serde_json::Map::new();
            for (f, c) in study.factors.iter().zip(&run.coded) {
                let value = match levels {
                    Levels::Coded => serde_json::Value::from(*c),
                    Levels::Real => match f.setting(*c) {
                        Setting::Value(v) => serde_json::Value::from(v),
                        Setting::Level(l) => serde_json::Value::from(l),
                    },
                };
                settings.insert(f.id.clone(), value);
            }
            serde_json::json!({
                "run": run.id.0,
                "order": run.order,
                "nominal": run.nominal,
                "settings": settings,
            })
        })
        .collect();
    serde_json::json!({
        "study": study.info.id,
        "levels": match levels { Levels::Coded => "coded", Levels::Real => "real" },
        "responses": study.responses.iter().map(|r| r.id.clone()).collect::<Vec<_>>(),
        "runs": runs,
    })
}

/// The run sheet as CSV text.
pub fn csv(study: &Study, design: &Design, levels: Levels) -> String {
    let (header, rows) = rows(study, design, levels);
    // Every cell made safe for a spreadsheet (the results reader undoes it).
    String::from_utf8(crate::output::csv_bytes(&header, &rows)).unwrap_or_default()
}
