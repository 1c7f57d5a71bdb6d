//! The figures agree with the tables they illustrate: one fitted model per response, under
//! exclusion and drift correction, and each figure's CSV beside it.

use std::path::{Path, PathBuf};

use crate::common::{example, fixture};
use crate::report::*;

/// An invented 2³ with three nominal runs, an additive drift correction, run 4 excluded, a
/// response declared with 0 decimals and a requested temp×ph interaction plot.
pub(crate) const CHAPTER: &str = "report-chapter/study.yaml";

/// The rows of a CSV file as column → value maps.
pub(crate) fn csv_rows(path: &Path) -> Vec<std::collections::BTreeMap<String, String>> {
    let mut r = csv::Reader::from_path(path).unwrap_or_else(|e| panic!("{}: {e}", path.display()));
    let header: Vec<String> = r.headers().unwrap().iter().map(String::from).collect();
    r.records()
        .map(|rec| {
            let rec = rec.unwrap();
            header
                .iter()
                .cloned()
                .zip(rec.iter().map(String::from))
                .collect()
        })
        .collect()
}

pub(crate) fn number(row: &std::collections::BTreeMap<String, String>, column: &str) -> f64 {
    row.get(column)
        .unwrap_or_else(|| panic!("no column {column} in {row:?}"))
        .parse()
        .unwrap_or_else(|e| panic!("{column} = {:?}: {e}", row.get(column)))
}

/// The effect of `term` in `effects-<response>.csv`.
pub(crate) fn tabulated_effect(out: &Path, response: &str, term: &str) -> f64 {
    let rows = csv_rows(&out.join(format!("effects-{response}.csv")));
    let row = rows
        .iter()
        .find(|r| r["term"] == term)
        .unwrap_or_else(|| panic!("no term {term} in effects-{response}.csv"));
    number(row, "effect")
}

/// section.typ as plain text: whitespace collapsed, Typst's markup escapes removed.
pub(crate) fn section_text(out: &Path) -> String {
    flat(&read(&out.join("section.typ"))).replace('\\', "")
}

pub(crate) fn chapter_report() -> (tempfile::TempDir, PathBuf) {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("r");
    report_no_pdf(&fixture(CHAPTER), &out);
    (dir, out)
}

#[test]
fn main_effect_points_differ_by_the_tabulated_effect_under_exclusion_and_drift_correction() {
    // The figure's two means of a factor are intercept ∓ E/2, so their difference is the
    // effect of the effects table exactly (definition of an effect, Box, Hunter & Hunter 2005,
    // §5.8); 1e-9 allows only floating-point rounding.
    let (_dir, out) = chapter_report();
    for response in ["assay", "area"] {
        let rows = csv_rows(&out.join(format!("main-effects-{response}.csv")));
        assert_eq!(rows.len(), 3, "one row per factor");
        for row in &rows {
            let table = tabulated_effect(&out, response, &row["factor"]);
            let plotted = number(row, "mean_high") - number(row, "mean_low");
            assert!(
                (plotted - table).abs() < 1e-9 * table.abs().max(1.0),
                "{response} {}: plotted {plotted}, table {table}",
                row["factor"]
            );
        }
    }
}

#[test]
fn interaction_cells_reproduce_both_main_effects_and_the_interaction_of_the_table() {
    // From four cell means ȳ(a, b): E_A = mean over b of ȳ(+, b) − ȳ(−, b), likewise E_B, and
    // E_AB = [ȳ(+,+) − ȳ(−,+) − ȳ(+,−) + ȳ(−,−)]/2 (Box, Hunter & Hunter 2005, §5.8).
    let (_dir, out) = chapter_report();
    let rows = csv_rows(&out.join("interaction-assay-temp-ph.csv"));
    let cell = |a: &str, b: &str| {
        let row = rows
            .iter()
            .find(|r| r["temp_coded"] == a && r["ph_coded"] == b)
            .unwrap();
        number(row, "mean")
    };
    let (mm, pm, mp, pp) = (
        cell("-1", "-1"),
        cell("1", "-1"),
        cell("-1", "1"),
        cell("1", "1"),
    );
    let e_temp = (pm + pp - mm - mp) / 2.0;
    let e_ph = (mp + pp - mm - pm) / 2.0;
    let e_int = (pp - mp - pm + mm) / 2.0;
    for (term, plotted) in [("temp", e_temp), ("ph", e_ph), ("temp×ph", e_int)] {
        let table = tabulated_effect(&out, "assay", term);
        assert!(
            (plotted - table).abs() < 1e-9,
            "{term}: plotted {plotted}, table {table}"
        );
    }
}

#[test]
fn the_run_order_chart_plots_the_corrected_values_and_draws_the_excluded_run_apart() {
    let (_dir, out) = chapter_report();
    let analysis = crate::common::json_of(&read(&out.join("analysis.json")));
    let values = analysis["responses"][0]["values"].as_array().unwrap();
    let rows = csv_rows(&out.join("run-order-assay.csv"));
    assert_eq!(rows.len(), values.len());
    for (row, v) in rows.iter().zip(values) {
        assert_eq!(row["run"], v["run"].as_str().unwrap());
        assert_eq!(number(row, "value_used"), v["value"].as_f64().unwrap());
        assert_eq!(number(row, "value_as_measured"), v["raw"].as_f64().unwrap());
    }
    let run4 = rows.iter().find(|r| r["run"] == "4").unwrap();
    assert_eq!(run4["excluded"], "true");
    let svg = svg_texts(&read(&out.join("run-order-assay.svg")));
    for legend in [
        "excluded run",
        "as measured",
        "nominal run",
        "drift (least squares)",
    ] {
        assert!(svg.iter().any(|t| t == legend), "no {legend:?} in {svg:?}");
    }
}

#[test]
fn without_a_drift_correction_the_run_order_chart_has_no_second_series() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("r");
    report_no_pdf(&example(EXAMPLE), &out);
    let header = read(&out.join("run-order-assay.csv"));
    assert!(
        header.starts_with("run,order,nominal,excluded,value_used\n"),
        "{header}"
    );
    assert!(!read(&out.join("run-order-assay.svg")).contains("as measured"));
}

#[test]
fn runs_csv_marks_the_excluded_run_with_its_reason_and_leaves_its_used_value_empty() {
    let (_dir, out) = chapter_report();
    let rows = csv_rows(&out.join("runs.csv"));
    let run4 = rows.iter().find(|r| r["run"] == "4").unwrap();
    assert_eq!(run4["excluded"], "true");
    assert_eq!(
        run4["exclusion_reason"],
        "vial cap found loose after the run"
    );
    assert_eq!(run4["assay"], "104.3", "the value as measured stays");
    assert_eq!(run4["assay_used"], "");
    let run1 = rows.iter().find(|r| r["run"] == "1").unwrap();
    assert_eq!(run1["excluded"], "false");
    assert_eq!(run1["exclusion_reason"], "");
    // Additive correction against the first nominal run (100.0 at order 1): run 1 at order 2
    // is corrected by the interpolated nominal drift (arithmetic on the fixture's values).
    assert_ne!(run1["assay_used"], run1["assay"]);
}

#[test]
fn every_figure_has_a_csv_beside_it_with_ascii_headers_and_plain_minus_signs() {
    let (_dir, out) = chapter_report();
    for svg in names(&out).into_iter().filter(|n| n.ends_with(".svg")) {
        let csv = svg.replace(".svg", ".csv");
        assert!(out.join(&csv).exists(), "{csv} missing beside {svg}");
        let text = read(&out.join(&csv));
        let header = text.lines().next().unwrap_or_default();
        assert!(header.is_ascii(), "{csv}: header {header:?} is not ASCII");
        // Numbers keep the ASCII hyphen-minus so a spreadsheet reads them as numbers.
        assert!(!text.contains('\u{2212}'), "{csv} has a typographic minus");
        if csv.starts_with("effect-bars") || csv.starts_with("main-effects") {
            // The ph effect is negative on both responses (effects tables).
            assert!(text.contains(",-"), "{csv}: expected a negative value");
        }
    }
}

#[test]
fn declared_zero_decimals_print_without_a_decimal_point_in_the_chapter() {
    // Peak area declares `decimals: 0`: its reference and its effects print as whole counts.
    let (_dir, out) = chapter_report();
    let analysis = crate::common::json_of(&read(&out.join("analysis.json")));
    let area = &analysis["responses"][1];
    assert_eq!(area["id"], "area");
    let reference = area["reference"].as_f64().unwrap();
    let effect = area["effects"][0]["effect"].as_f64().unwrap();
    let section = section_text(&out);
    let whole = format!("mean of the nominal runs, {reference:.0} counts");
    assert!(section.contains(&whole), "no {whole:?} in {section}");
    assert!(
        !section.contains(&format!("{reference:.1} counts")),
        "declared decimals ignored"
    );
    assert!(section.contains(&format!("[{effect:.0}]")), "{section}");
    assert!(!section.contains(&format!("[{effect:.1}]")), "{section}");
}

#[test]
fn a_requested_interaction_of_an_aliased_term_is_explained_not_dropped() {
    // In the Youden–Steiner design every two-factor interaction shares a main-effect column.
    let dir = tempfile::tempdir().unwrap();
    let src = fixture("report-youden");
    for f in ["study.yaml", "results.csv"] {
        std::fs::copy(src.join(f), dir.path().join(f)).unwrap();
    }
    let study = dir.path().join("study.yaml");
    let text = read(&study) + "figures:\n  interactions: [mass×vol]\n";
    std::fs::write(&study, text).unwrap();
    let out = dir.path().join("r");
    report_no_pdf(&study, &out);
    assert!(!names(&out).iter().any(|n| n.starts_with("interaction-")));
    let section = section_text(&out);
    assert!(
        section.contains(
            "No interaction plot of mass×vol on Content, although the study asks for one"
        ),
        "{section}"
    );
    assert!(section.contains("alias chain"), "{section}");
}

#[test]
fn a_half_normal_plot_of_three_effects_is_replaced_by_its_reason() {
    // A 2² has 3 effects, fewer than the 7 the chapter requires for a half-normal plot.
    let dir = tempfile::tempdir().unwrap();
    let study = dir.path().join("study.yaml");
    std::fs::write(
        &study,
        "schema: 1
study: { id: T-22, title: Two factors, method: M-1, analyst: A. B., date: 2026-01-05 }
factors:
  - { id: temp, name: Temperature, unit: °C, nominal: 35, delta: 2 }
  - { id: ph, name: pH, nominal: 3.0, delta: 0.1 }
design: { kind: full-factorial, randomize: false }
responses:
  - { id: assay, name: Assay, unit: '%' }
results:
  runs:
    - { run: 1, assay: 99.1 }
    - { run: 2, assay: 100.4 }
    - { run: 3, assay: 99.6 }
    - { run: 4, assay: 100.9 }
",
    )
    .unwrap();
    let out = dir.path().join("r");
    report_no_pdf(&study, &out);
    assert!(!out.join("halfnormal-assay.svg").exists());
    let section = section_text(&out);
    assert!(
        section.contains(
            "No half-normal plot of the effects on Assay: 3 effects are fewer than the 7"
        ),
        "{section}"
    );
}

#[test]
fn without_nominal_runs_no_figure_names_nominal_runs() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("r");
    // The Youden–Steiner fixture has no nominal runs.
    report_no_pdf(&fixture("report-youden/study.yaml"), &out);
    for svg in names(&out).into_iter().filter(|n| n.ends_with(".svg")) {
        assert!(
            !read(&out.join(&svg)).contains("nominal run"),
            "{svg} has a nominal-run legend"
        );
    }
}

#[test]
fn a_large_full_factorial_reports_with_a_run_order_chart() {
    // 2^14 = 16,384 runs: the run-order chart adapts (thin markers) instead of failing.
    let dir = tempfile::tempdir().unwrap();
    let mut yaml = String::from(
        "schema: 1
study: { id: T-14, title: Fourteen factors, method: M-1, analyst: A. B., date: 2026-01-05 }
factors:
",
    );
    for i in 0..14 {
        yaml.push_str(&format!(
            "  - {{ id: f{i}, name: Factor {i}, nominal: 10, delta: 1 }}\n"
        ));
    }
    yaml.push_str(
        "design: { kind: full-factorial, randomize: false }
responses:
  - { id: y, name: Response, unit: mg }
results: { file: results.csv }
",
    );
    let mut csv = String::from("run,y\n");
    for run in 1..=16_384u32 {
        // Invented values: a slow wave over the run number.
        csv.push_str(&format!(
            "{run},{:.2}\n",
            100.0 + f64::from(run % 97) / 100.0
        ));
    }
    std::fs::write(dir.path().join("study.yaml"), yaml).unwrap();
    std::fs::write(dir.path().join("results.csv"), csv).unwrap();
    let out = dir.path().join("r");
    report_no_pdf(&dir.path().join("study.yaml"), &out);
    let rows = csv_rows(&out.join("run-order-y.csv"));
    assert_eq!(rows.len(), 16_384);
    let svg = read(&out.join("run-order-y.svg"));
    assert!(svg.starts_with("<svg"));
}
