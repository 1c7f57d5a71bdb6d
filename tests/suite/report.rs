//! The robustness chapter as a reviewer receives it: the figures, the chapter's structure and
//! numbering, the two outputs (report.typ and section.typ), lab templates, and the archival,
//! reproducible PDF.

use std::path::{Path, PathBuf};

use crate::common::{example, fixture, pdf_text, plateau, typst_binary};

const EXAMPLE: &str = "hplc-assay/study.yaml";

/// `plateau report --no-pdf -o OUT STUDY`.
fn report_no_pdf(study: &Path, out: &Path) {
    plateau(&["report", "--no-pdf", "-o"])
        .arg_path(out)
        .arg_path(study)
        .ok();
}

/// `plateau report --typst T -o OUT STUDY`.
fn report_pdf(study: &Path, out: &Path) {
    let typst = typst_binary();
    plateau(&["report", "--typst"])
        .arg_path(&typst)
        .arg("-o")
        .arg_path(out)
        .arg_path(study)
        .ok();
}

fn names(dir: &Path) -> Vec<String> {
    let mut names: Vec<String> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().to_string())
        .collect();
    names.sort();
    names
}

fn read(path: &Path) -> String {
    std::fs::read_to_string(path).unwrap_or_else(|e| panic!("{}: {e}", path.display()))
}

/// The texts of an SVG's `<text>` elements, trimmed.
fn svg_texts(svg: &str) -> Vec<String> {
    svg.split("<text")
        .skip(1)
        .filter_map(|part| {
            let body = &part[part.find('>')? + 1..];
            Some(body[..body.find("</text>")?].trim().to_string())
        })
        .collect()
}

fn flat(text: &str) -> String {
    text.split_whitespace().collect::<Vec<_>>().join(" ")
}

/// A template folder holding the built-in `section.typ.j2` with `edit` applied.
fn lab_templates(dir: &Path, section: &str) -> PathBuf {
    let t = dir.join("lab-templates");
    std::fs::create_dir_all(&t).unwrap();
    std::fs::write(t.join("section.typ.j2"), section).unwrap();
    t
}

fn built_in_section() -> String {
    read(&crate::common::root().join("templates/section.typ.j2"))
}

#[test]
fn every_figure_of_the_example_exists_as_svg_with_its_labels() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("r");
    report_no_pdf(&example(EXAMPLE), &out);
    for response in ["assay", "resolution"] {
        for kind in ["halfnormal", "effect-bars", "main-effects", "run-order"] {
            let path = out.join(format!("{kind}-{response}.svg"));
            let svg = read(&path);
            assert!(svg.starts_with("<svg"), "{} is not an SVG", path.display());
            assert!(svg.trim_end().ends_with("</svg>"), "{}", path.display());
        }
    }
    // Term labels on the effect plots; the limit line where a limit is declared (assay: 2 %).
    let half = read(&out.join("halfnormal-assay.svg"));
    let bars = read(&out.join("effect-bars-assay.svg"));
    for svg in [&half, &bars] {
        let texts = svg_texts(svg);
        for term in ["temp", "ph", "flow", "temp×ph", "temp×ph×flow"] {
            assert!(
                texts.iter().any(|t| t == term),
                "no label {term} in {texts:?}"
            );
        }
    }
    // 2 % of the nominal mean 99.8 is 1.996 (arithmetic).
    assert!(
        svg_texts(&half).iter().any(|t| t == "limit (2 %) = 1.996"),
        "{:?}",
        svg_texts(&half)
    );
    assert!(
        svg_texts(&bars).iter().any(|t| t == "limit = 2"),
        "{:?}",
        svg_texts(&bars)
    );
    assert!(
        !read(&out.join("effect-bars-resolution.svg")).contains("limit"),
        "no limit declared for resolution"
    );
    // Level texts with units and the factor names on the main-effects plot.
    let main = read(&out.join("main-effects-assay.svg"));
    for text in [
        "Column temperature",
        "33 °C",
        "37 °C",
        "2.9",
        "3.1",
        "0.9 mL/min",
    ] {
        assert!(main.contains(text), "main-effects plot lacks {text}");
    }
    let order = read(&out.join("run-order-assay.svg"));
    assert!(
        order.contains("nominal run"),
        "run-order chart does not mark nominal runs"
    );
    // The chapter places each figure with a caption and alt text.
    let section = read(&out.join("section.typ"));
    for file in [
        "halfnormal-assay.svg",
        "effect-bars-assay.svg",
        "main-effects-assay.svg",
        "run-order-assay.svg",
    ] {
        assert!(
            section.contains(&format!("image(\"{file}\", width: ")),
            "{file} not placed"
        );
    }
    assert_eq!(section.matches("alt: \"").count(), 8);
}

#[test]
fn figures_and_sources_are_byte_identical_across_two_runs() {
    let dir = tempfile::tempdir().unwrap();
    let (a, b) = (dir.path().join("a"), dir.path().join("b"));
    report_no_pdf(&example(EXAMPLE), &a);
    report_no_pdf(&example(EXAMPLE), &b);
    assert_eq!(names(&a), names(&b));
    for name in names(&a) {
        assert_eq!(
            std::fs::read(a.join(&name)).unwrap(),
            std::fs::read(b.join(&name)).unwrap(),
            "{name} differs"
        );
    }
}

#[test]
fn a_relevant_clean_interaction_gets_its_own_figure() {
    // temp×ph is clean up to order 2 in the 2^(5−1) of resolution V and exceeds the limit.
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("r");
    report_no_pdf(&fixture("report-fraction/study.yaml"), &out);
    let svgs: Vec<String> = names(&out)
        .into_iter()
        .filter(|n| n.starts_with("interaction-") && n.ends_with(".svg"))
        .collect();
    assert_eq!(svgs, ["interaction-content-temp-ph.svg"]);
    let svg = read(&out.join("interaction-content-temp-ph.svg"));
    for text in [
        "Column temperature",
        "27 °C",
        "33 °C",
        "4.3",
        "4.7",
        "no other term up to order 2",
    ] {
        assert!(svg.contains(text), "interaction plot lacks {text}");
    }
    let section = read(&out.join("section.typ"));
    assert!(section.contains("image(\"interaction-content-temp-ph.svg\""));
}

#[test]
fn an_aliased_interaction_gets_no_interaction_figure() {
    // In the Youden–Steiner design every two-factor interaction shares a main-effect column.
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("r");
    report_no_pdf(&fixture("report-youden/study.yaml"), &out);
    assert!(!names(&out).iter().any(|n| n.starts_with("interaction-")));
}

#[test]
fn report_typ_includes_section_typ_so_both_outputs_are_the_same_chapter() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("r");
    report_no_pdf(&example(EXAMPLE), &out);
    let report = read(&out.join("report.typ"));
    let section = read(&out.join("section.typ"));
    assert!(report.contains("#include \"section.typ\""), "{report}");
    assert!(
        !report.contains("== "),
        "the chapter text lives in section.typ only"
    );
    assert!(section.contains("= Robustness study"));
    // A dossier includes the fragment from elsewhere: figure paths are relative, no set page.
    assert!(!section.contains("#set page"));
    assert!(!section.contains("image(\"/"));
}

/// The value of an XMP property written either as an attribute (`name="v"`) or an element
/// (`<name>v</name>`).
fn xmp_value(xmp: &str, name: &str) -> Option<String> {
    if let Some(i) = xmp.find(&format!("{name}=\"")) {
        let rest = &xmp[i + name.len() + 2..];
        return rest.find('"').map(|j| rest[..j].to_string());
    }
    let open = format!("<{name}>");
    let i = xmp.find(&open)?;
    let rest = &xmp[i + open.len()..];
    rest.find('<').map(|j| rest[..j].trim().to_string())
}

#[test]
fn a_template_syntax_error_names_the_lab_file_and_line_and_exits_1() {
    let dir = tempfile::tempdir().unwrap();
    let t = lab_templates(dir.path(), "= Robustness study\n\nline two\n{% if %}\n");
    let out = dir.path().join("r");
    let run = plateau(&["report", "--no-pdf", "--templates"])
        .arg_path(&t)
        .arg("-o")
        .arg_path(&out)
        .arg_path(&example(EXAMPLE))
        .code(1);
    assert!(run.stderr.contains("section.typ.j2:4"), "{}", run.stderr);
    assert!(
        run.stderr
            .contains(&t.join("section.typ.j2").display().to_string()),
        "{}",
        run.stderr
    );
    assert!(run.stderr.contains("syntax error"), "{}", run.stderr);
    assert!(!out.exists(), "no report folder after a template error");
}

#[test]
fn an_undefined_variable_in_a_lab_template_names_it_with_file_and_line() {
    let dir = tempfile::tempdir().unwrap();
    let t = lab_templates(dir.path(), "= Robustness study\n\n{{ study.nmae }}\n");
    let run = plateau(&["report", "--no-pdf", "--templates"])
        .arg_path(&t)
        .arg("-o")
        .arg_path(&dir.path().join("r"))
        .arg_path(&example(EXAMPLE))
        .code(1);
    assert!(run.stderr.contains("section.typ.j2:3"), "{}", run.stderr);
    assert!(run.stderr.contains("undefined"), "{}", run.stderr);
}

#[test]
fn a_template_cannot_include_a_file_outside_its_folder() {
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(dir.path().join("outside.typ.j2"), "OUTSIDE").unwrap();
    let t = lab_templates(dir.path(), "{% include \"../outside.typ.j2\" %}\n");
    let run = plateau(&["report", "--no-pdf", "--templates"])
        .arg_path(&t)
        .arg("-o")
        .arg_path(&dir.path().join("r"))
        .arg_path(&example(EXAMPLE))
        .code(1);
    assert!(run.stderr.contains("../outside.typ.j2"), "{}", run.stderr);
    assert!(!dir.path().join("r").exists());
}

#[test]
fn export_templates_writes_every_template_and_refuses_to_overwrite() {
    let dir = tempfile::tempdir().unwrap();
    let target = dir.path().join("t");
    let written = plateau::report::export_templates(&target).unwrap();
    let mut got: Vec<String> = written
        .iter()
        .map(|p| p.file_name().unwrap().to_string_lossy().to_string())
        .collect();
    got.sort();
    let mut expected: Vec<String> = plateau::report::render::BUILT_IN
        .iter()
        .map(|(name, _)| name.to_string())
        .chain(std::iter::once("README.md".to_string()))
        .collect();
    expected.sort();
    assert_eq!(got, expected);
    assert!(got.contains(&"section.typ.j2".to_string()));
    assert_eq!(read(&target.join("section.typ.j2")), built_in_section());
    assert!(read(&target.join("README.md")).contains("section_depth"));
    // A second export changes nothing and names the file in the way.
    std::fs::write(target.join("section.typ.j2"), "mine").unwrap();
    let err = plateau::report::export_templates(&target)
        .unwrap_err()
        .to_string();
    assert!(
        err.contains("report.typ.j2") && err.contains("already exists"),
        "{err}"
    );
    assert_eq!(read(&target.join("section.typ.j2")), "mine");
}

#[test]
fn exported_templates_used_as_they_are_give_the_built_in_report() {
    let dir = tempfile::tempdir().unwrap();
    let t = dir.path().join("t");
    plateau::report::export_templates(&t).unwrap();
    let (a, b) = (dir.path().join("a"), dir.path().join("b"));
    report_no_pdf(&example(EXAMPLE), &a);
    plateau(&["report", "--no-pdf", "--templates"])
        .arg_path(&t)
        .arg("-o")
        .arg_path(&b)
        .arg_path(&example(EXAMPLE))
        .ok();
    for name in ["report.typ", "section.typ"] {
        assert_eq!(read(&a.join(name)), read(&b.join(name)), "{name}");
    }
}

#[test]
fn design_section_shows_generators_defining_relation_and_aliases_of_a_fraction() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("r");
    report_no_pdf(&fixture("report-youden/study.yaml"), &out);
    let section = read(&out.join("section.typ"));
    assert!(section.contains("[Generators]"), "{section}");
    assert!(section.contains("[Defining relation], [I \\="), "{section}");
    assert!(section.contains("[Resolution], [III]"), "{section}");
    assert!(section.contains("A#sub[3]"), "{section}");
    assert!(section.contains("caption: [Alias table]"), "{section}");
    assert!(section.contains("[mass], [mass \\= vol×temp"), "{section}");
    assert!(
        section.contains("Youden, E\\. H\\. Steiner"),
        "Youden & Steiner cited"
    );
}

#[test]
fn design_section_of_a_plackett_burman_lists_dummies_and_partial_aliasing() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("r");
    report_no_pdf(&fixture("report-pb/study.yaml"), &out);
    let section = read(&out.join("section.typ"));
    assert!(
        section.contains("[Dummy columns], [d1, d2, d3, d4, d5"),
        "{section}"
    );
    assert!(
        section.contains("caption: [Partial aliasing of main effects"),
        "{section}"
    );
    // Each main effect of a 12-run Plackett–Burman is correlated ±1/3 with the two-factor
    // interactions of the other factors (Plackett & Burman 1946; common practice): with six
    // factors, the C(5,2) = 10 interactions not containing the factor.
    assert!(section.contains("[inj], [10], [0\\.33]"), "{section}");
    assert!(
        section.contains("Plackett, J\\. P\\. Burman"),
        "Plackett & Burman cited"
    );
    assert!(
        !section.contains("caption: [Alias table]"),
        "no alias table without shared columns"
    );
    // Dummy effects are printed in italics.
    assert!(section.contains("[_d1_]"), "{section}");
}

#[test]
fn sections_with_nothing_to_say_are_left_out() {
    // The Plackett–Burman fixture has no notes and no justification.
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("r");
    report_no_pdf(&fixture("report-pb/study.yaml"), &out);
    let section = read(&out.join("section.typ"));
    assert!(!section.contains("Deviations and analyst notes"));
    assert!(!section.contains("Why each range was chosen"));
    assert!(!section.contains("[Generators]"));
}

/// True when `text` holds `-0.0…`/`−0.0…` with only zeros after the minus (a negative zero).
fn has_negative_zero(text: &str) -> bool {
    let chars: Vec<char> = text.chars().collect();
    chars.iter().enumerate().any(|(i, c)| {
        if *c != '-' && *c != '\u{2212}' {
            return false;
        }
        let digits: String = chars[i + 1..]
            .iter()
            .take_while(|c| c.is_ascii_digit() || **c == '.' || **c == '\\')
            .filter(|c| **c != '\\')
            .collect();
        !digits.is_empty()
            && digits.chars().any(|c| c == '0')
            && digits.chars().all(|c| c == '0' || c == '.')
    })
}

#[test]
fn no_nan_inf_or_negative_zero_reaches_the_typst_sources() {
    let dir = tempfile::tempdir().unwrap();
    for (i, study) in [
        example(EXAMPLE),
        fixture("report-fraction/study.yaml"),
        fixture("report-pb/study.yaml"),
        fixture("report-youden/study.yaml"),
    ]
    .iter()
    .enumerate()
    {
        let out = dir.path().join(format!("r{i}"));
        report_no_pdf(study, &out);
        for name in ["report.typ", "section.typ"] {
            let text = read(&out.join(name));
            let words: Vec<&str> = text.split(|c: char| !c.is_alphanumeric()).collect();
            for bad in ["NaN", "nan", "inf", "Inf", "infinity"] {
                assert!(
                    !words.contains(&bad),
                    "{bad} in {name} of {}",
                    study.display()
                );
            }
            assert!(
                !has_negative_zero(&text),
                "negative zero in {name} of {}",
                study.display()
            );
        }
    }
}

#[test]
fn the_negative_zero_check_can_fail() {
    assert!(has_negative_zero("[\u{2212}0\\.00]"));
    assert!(has_negative_zero("-0.0 "));
    assert!(!has_negative_zero("\u{2212}0\\.03"));
    assert!(!has_negative_zero("2026\\-11\\-18"));
}

// ---- The chapter a reviewer can sign: figures, run table and numbers agree. ----

/// An invented 2³ with three nominal runs, an additive drift correction, run 4 excluded, a
/// response declared with 0 decimals and a requested temp×ph interaction plot.
const CHAPTER: &str = "report-chapter/study.yaml";

/// The rows of a CSV file as column → value maps.
fn csv_rows(path: &Path) -> Vec<std::collections::BTreeMap<String, String>> {
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

fn number(row: &std::collections::BTreeMap<String, String>, column: &str) -> f64 {
    row.get(column)
        .unwrap_or_else(|| panic!("no column {column} in {row:?}"))
        .parse()
        .unwrap_or_else(|e| panic!("{column} = {:?}: {e}", row.get(column)))
}

/// The effect of `term` in `effects-<response>.csv`.
fn tabulated_effect(out: &Path, response: &str, term: &str) -> f64 {
    let rows = csv_rows(&out.join(format!("effects-{response}.csv")));
    let row = rows
        .iter()
        .find(|r| r["term"] == term)
        .unwrap_or_else(|| panic!("no term {term} in effects-{response}.csv"));
    number(row, "effect")
}

/// section.typ as plain text: whitespace collapsed, Typst's markup escapes removed.
fn section_text(out: &Path) -> String {
    flat(&read(&out.join("section.typ"))).replace('\\', "")
}

fn chapter_report() -> (tempfile::TempDir, PathBuf) {
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

/// The behaviours that need typst 0.15: they typeset and read the PDF.
mod typeset {
    use super::*;

    #[test]
    fn a_lab_template_overrides_one_file_and_the_rest_stay_built_in() {
        let dir = tempfile::tempdir().unwrap();
        let section = built_in_section().replacen(
            "= Robustness study\n",
            "= Robustness study\n\n#text(fill: rgb(\"#224466\"))[Laboratory header line ZX-17]\n",
            1,
        );
        let t = lab_templates(dir.path(), &section);
        let out = dir.path().join("r");
        let typst = typst_binary();
        plateau(&["report", "--typst"])
            .arg_path(&typst)
            .arg("--templates")
            .arg_path(&t)
            .arg("-o")
            .arg_path(&out)
            .arg_path(&example(EXAMPLE))
            .ok();
        assert!(read(&out.join("section.typ")).contains("Laboratory header line ZX-17"));
        // report.typ is still the built-in one: it includes the chapter and sets the page.
        let report = read(&out.join("report.typ"));
        assert!(report.contains("#include \"section.typ\"") && report.contains("#set page("));
        let text = flat(&pdf_text(&out.join("report.pdf")));
        assert!(text.contains("Laboratory header line ZX-17"), "{text}");
        assert!(text.contains("1.5 Design"), "{text}");
    }

    #[test]
    fn a_section_number_prefixes_every_heading_of_the_chapter() {
        // Render the chapter with section 7.4 through the library and typeset it.
        let typst = plateau::report::typst::find(Some(&typst_binary())).unwrap();
        let evaluated = plateau::pipeline::evaluate(&example(EXAMPLE)).unwrap();
        let figures = plateau::report::figures::build(&evaluated).unwrap();
        let mut ctx = plateau::report::context::build(&evaluated, Some("0.15"), &figures);
        ctx.section = "7.4".to_string();
        ctx.section_depth = plateau::report::context::section_depth("7.4");
        let env = plateau::report::render::environment(None);
        let value = minijinja::Value::from(minijinja::value::Serde(&ctx));
        let dir = tempfile::tempdir().unwrap();
        let root = dir.path();
        for (name, out) in [
            ("section.typ.j2", "section.typ"),
            ("report.typ.j2", "report.typ"),
        ] {
            let text = plateau::report::render::render(&env, name, value.clone()).unwrap();
            std::fs::write(root.join(out), text).unwrap();
        }
        for (name, bytes) in figures.files() {
            std::fs::write(root.join(name), bytes).unwrap();
        }
        let packages = root.join("no-packages");
        std::fs::create_dir_all(&packages).unwrap();
        typst
            .compile(root, "report.typ", "report.pdf", 0, &packages)
            .unwrap();
        let text = flat(&pdf_text(&root.join("report.pdf")));
        for h in [
            "7.4 Robustness study",
            "7.4.1 Objective and scope",
            "7.4.8.1 Assay",
            "7.4.15 Review and approval",
        ] {
            assert!(text.contains(h), "no heading {h:?} in\n{text}");
        }
        assert!(!text.contains("1.1 Objective"), "{text}");
    }

    #[test]
    fn a_template_reading_etc_passwd_fails_in_the_typesetter_with_exit_3() {
        let dir = tempfile::tempdir().unwrap();
        let section = built_in_section().replacen(
            "= Robustness study\n",
            "= Robustness study\n\n#raw(read(\"/etc/passwd\"))\n",
            1,
        );
        let t = lab_templates(dir.path(), &section);
        let out = dir.path().join("r");
        let typst = typst_binary();
        let run = plateau(&["report", "--typst"])
            .arg_path(&typst)
            .arg("--templates")
            .arg_path(&t)
            .arg("-o")
            .arg_path(&out)
            .arg_path(&example(EXAMPLE))
            .code(3);
        // typst resolves "/etc/passwd" inside the report folder, where there is no such file.
        assert!(run.stderr.contains("section.typ:"), "{}", run.stderr);
        assert!(run.stderr.contains("etc/passwd"), "{}", run.stderr);
        assert!(!run.stderr.contains("root:x:0:0"), "{}", run.stderr);
        assert!(!out.exists(), "no report after a failed compile");
    }

    #[test]
    fn p_values_below_one_in_a_thousand_print_as_below_0_001_in_the_pdf() {
        // The example's ANOVA has p = 0.00041 for temp (analysis.json); the Plackett–Burman example
        // drifts with p ≈ 1e-15.
        let dir = tempfile::tempdir().unwrap();
        for (study, out) in [
            (example(EXAMPLE), dir.path().join("a")),
            (
                example("lc-impurities-pb12/study.yaml"),
                dir.path().join("b"),
            ),
        ] {
            report_pdf(&study, &out);
            let text = flat(&pdf_text(&out.join("report.pdf")));
            assert!(text.contains("< 0.001"), "{text}");
            assert!(!text.contains("p = < 0.001"), "{text}");
            assert!(
                !text.contains("0.000 "),
                "a p-value printed as 0.000: {text}"
            );
        }
    }

    #[test]
    fn the_chapter_headings_appear_in_order() {
        let dir = tempfile::tempdir().unwrap();
        let out = dir.path().join("r");
        report_pdf(&example(EXAMPLE), &out);
        let text = flat(&pdf_text(&out.join("report.pdf")));
        let headings = [
            "1 Robustness study",
            "1.1 Objective and scope",
            "1.2 Method and nominal conditions",
            "1.3 Factors and levels",
            "1.4 Responses and acceptance criteria",
            "1.5 Design",
            "1.6 Results",
            "1.7 Drift check",
            "1.8 Effects",
            "1.8.1 Assay",
            "1.8.2 Resolution tarvenolide",
            "1.9 Figures",
            "1.10 System suitability and control ranges",
            "1.10.1 Operating ranges",
            "1.11 Deviations and analyst notes",
            "1.12 Conclusion",
            "1.13 References",
            "1.14 Provenance",
            "1.15 Review and approval",
            "Caution.",
        ];
        let mut at = 0;
        for h in headings {
            match text[at..].find(h) {
                Some(i) => at += i + h.len(),
                None => panic!("heading {h:?} missing or out of order after byte {at} in\n{text}"),
            }
        }
        // The signatures are left to the signatories; the analyst prepared it.
        assert!(text.contains("Prepared by I. Marsh"), "{text}");
        assert!(text.contains("Reviewed by"), "{text}");
        assert!(text.contains("Approved by"), "{text}");
    }

    #[test]
    fn the_pdf_has_no_limit_column_when_one_limit_applies_to_every_row() {
        let dir = tempfile::tempdir().unwrap();
        let out = dir.path().join("r");
        report_pdf(&example(EXAMPLE), &out);
        let text = flat(&pdf_text(&out.join("report.pdf")));
        assert!(text.contains("Limit for every judged term: 2 %"), "{text}");
        assert!(!text.contains("Limit Relevant"), "{text}");
    }

    #[test]
    fn the_pdf_marks_the_excluded_run_and_shows_raw_and_used_values() {
        let dir = tempfile::tempdir().unwrap();
        let out = dir.path().join("r");
        report_pdf(&fixture(CHAPTER), &out);
        let text = flat(&pdf_text(&out.join("report.pdf")));
        assert!(
            text.contains("excluded from the evaluation: vial cap found loose after the run"),
            "{text}"
        );
        assert!(text.contains("assay used"), "{text}");
        assert!(text.contains("not used"), "{text}");
        // The corrected value of run 1 (as in runs.csv, rounded to the derived decimals).
        let rows = csv_rows(&out.join("runs.csv"));
        let run1 = rows.iter().find(|r| r["run"] == "1").unwrap();
        let used = format!("{:.2}", number(run1, "assay_used"));
        assert!(text.contains(&used), "no {used} in {text}");
    }

    #[test]
    fn the_pdf_prints_declared_zero_decimals_as_whole_numbers() {
        let dir = tempfile::tempdir().unwrap();
        let out = dir.path().join("r");
        report_pdf(&fixture(CHAPTER), &out);
        let text = flat(&pdf_text(&out.join("report.pdf")));
        let analysis = crate::common::json_of(&read(&out.join("analysis.json")));
        let reference = analysis["responses"][1]["reference"].as_f64().unwrap();
        assert!(text.contains(&format!("{reference:.0} counts")), "{text}");
        assert!(!text.contains(&format!("{reference:.1} counts")), "{text}");
    }

    #[test]
    fn the_pdf_shows_the_figures_with_numbered_captions() {
        let dir = tempfile::tempdir().unwrap();
        let out = dir.path().join("r");
        report_pdf(&example(EXAMPLE), &out);
        let text = flat(&pdf_text(&out.join("report.pdf")));
        for caption in [
            "Figure 1: Half-normal plot of the 7 absolute effects on Assay",
            "Figure 2: Absolute percent effects on Assay",
            "Figure 3: Model means of Assay",
            "Figure 4: Assay (% label claim) of every run",
            "Figure 5: Half-normal plot of the 7 absolute effects on Resolution",
            "Figure 8: Resolution tarvenolide / impurity B of every run",
        ] {
            assert!(text.contains(caption), "no caption {caption:?} in\n{text}");
        }
        // The SVGs are embedded as vectors: their labels are text in the PDF.
        assert!(text.contains("half-normal score"), "{text}");
    }

    #[test]
    fn the_report_folder_holds_the_pdf_sources_figures_tables_and_nothing_else() {
        let dir = tempfile::tempdir().unwrap();
        let out = dir.path().join("r");
        report_pdf(&example(EXAMPLE), &out);
        let mut expected: Vec<String> = [
            ".plateau-output",
            "analysis.json",
            "effects-assay.csv",
            "effects-resolution.csv",
            "factors.csv",
            "inputs.json",
            "report.pdf",
            "report.typ",
            "runs.csv",
            "section.typ",
        ]
        .iter()
        .map(|s| s.to_string())
        .collect();
        for response in ["assay", "resolution"] {
            for kind in ["halfnormal", "effect-bars", "main-effects", "run-order"] {
                expected.push(format!("{kind}-{response}.svg"));
                expected.push(format!("{kind}-{response}.csv"));
            }
        }
        expected.sort();
        assert_eq!(names(&out), expected);
        assert_eq!(
            std::fs::read_dir(dir.path()).unwrap().count(),
            1,
            "no staging folder left"
        );
    }

    #[test]
    fn two_report_runs_give_byte_identical_pdfs_declared_pdf_a_2b() {
        let dir = tempfile::tempdir().unwrap();
        let (a, b) = (dir.path().join("a"), dir.path().join("b"));
        report_pdf(&example(EXAMPLE), &a);
        report_pdf(&example(EXAMPLE), &b);
        let pdf = std::fs::read(a.join("report.pdf")).unwrap();
        assert!(
            pdf == std::fs::read(b.join("report.pdf")).unwrap(),
            "report.pdf differs between runs"
        );
        for name in names(&a).into_iter().filter(|n| n.ends_with(".svg")) {
            assert_eq!(
                std::fs::read(a.join(&name)).unwrap(),
                std::fs::read(b.join(&name)).unwrap(),
                "{name}"
            );
        }
        // ISO 19005-2 identification schema in the XMP packet: pdfaid:part 2, conformance B.
        let text = String::from_utf8_lossy(&pdf);
        let xmp_start = text
            .find("<x:xmpmeta")
            .expect("the PDF carries an uncompressed XMP packet");
        let xmp = &text[xmp_start..];
        let xmp = &xmp[..xmp.find("</x:xmpmeta>").expect("XMP packet closes")];
        assert!(
            xmp_value(xmp, "pdfaid:part").as_deref() == Some("2"),
            "{xmp}"
        );
        assert!(
            xmp_value(xmp, "pdfaid:conformance").as_deref() == Some("B"),
            "{xmp}"
        );
        // Title, author and keywords from the study.
        assert!(xmp.contains("Robustness study RS-2026-014"), "{xmp}");
        assert!(xmp.contains("I. Marsh"), "{xmp}");
        assert!(xmp.contains("method validation"), "{xmp}");
    }
}
