//! The robustness chapter as a reviewer receives it: the figures, the chapter's structure and
//! numbering, the two outputs (report.typ and section.typ), lab templates, and the archival,
//! reproducible PDF.

use std::path::{Path, PathBuf};

use crate::common::{example, fixture, pdf_text, plateau, typst_binary};

pub(crate) const EXAMPLE: &str = "hplc-assay/study.yaml";

/// `plateau report --no-pdf -o OUT STUDY`.
pub(crate) fn report_no_pdf(study: &Path, out: &Path) {
    plateau(&["report", "--no-pdf", "-o"])
        .arg_path(out)
        .arg_path(study)
        .ok();
}

/// `plateau report --typst T -o OUT STUDY`.
pub(crate) fn report_pdf(study: &Path, out: &Path) {
    let typst = typst_binary();
    plateau(&["report", "--typst"])
        .arg_path(&typst)
        .arg("-o")
        .arg_path(out)
        .arg_path(study)
        .ok();
}

pub(crate) fn names(dir: &Path) -> Vec<String> {
    let mut names: Vec<String> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().to_string())
        .collect();
    names.sort();
    names
}

pub(crate) fn read(path: &Path) -> String {
    std::fs::read_to_string(path).unwrap_or_else(|e| panic!("{}: {e}", path.display()))
}

/// The texts of an SVG's `<text>` elements, trimmed.
pub(crate) fn svg_texts(svg: &str) -> Vec<String> {
    svg.split("<text")
        .skip(1)
        .filter_map(|part| {
            let body = &part[part.find('>')? + 1..];
            Some(body[..body.find("</text>")?].trim().to_string())
        })
        .collect()
}

pub(crate) fn flat(text: &str) -> String {
    text.split_whitespace().collect::<Vec<_>>().join(" ")
}

/// A template folder holding the built-in `section.typ.j2` with `edit` applied.
pub(crate) fn lab_templates(dir: &Path, section: &str) -> PathBuf {
    let t = dir.join("lab-templates");
    std::fs::create_dir_all(&t).unwrap();
    std::fs::write(t.join("section.typ.j2"), section).unwrap();
    t
}

pub(crate) fn built_in_section() -> String {
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
pub(crate) fn xmp_value(xmp: &str, name: &str) -> Option<String> {
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

/// The behaviours that need typst 0.15: they typeset and read the PDF.
mod typeset {
    use super::*;
    use crate::figures::{CHAPTER, csv_rows, number};

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
