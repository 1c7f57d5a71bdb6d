//! Designs through the binary: what each column estimates, run sheets and their round trip,
//! and the seeded run order.

use crate::common::{example, fixture, json_of, plateau};

#[test]
fn in_the_half_fraction_with_i_equal_abc_the_ab_column_is_reported_as_c() {
    // Box, Hunter & Hunter (2005) ch. 6: in 2^(3−1) with I = ABC, AB is the same column as C.
    let run = plateau(&["analyze", "--json"])
        .arg_path(&fixture("half-fraction/study.yaml"))
        .ok();
    let doc = json_of(&run.stdout);
    assert_eq!(doc["design"]["resolution"], 3);
    assert_eq!(
        doc["design"]["defining_relation"],
        serde_json::json!(["I = A×B×C"])
    );
    let effects = doc["responses"][0]["effects"].as_array().unwrap();
    assert_eq!(effects.len(), 3, "four runs estimate three columns");
    let c = effects
        .iter()
        .find(|e| e["factors"] == serde_json::json!(["C"]))
        .unwrap();
    assert_eq!(c["label"], "C = A×B");
    assert_eq!(c["estimable"], false);
    assert_eq!(c["aliases"], serde_json::json!([["A", "B"]]));
    // No effect is ever labelled as the interaction A×B alone.
    assert!(effects.iter().all(|e| e["label"] != "A×B"));
}

#[test]
fn every_main_effect_of_the_youden_design_carries_three_two_factor_interactions() {
    // Youden & Steiner (1975): 7 factors in 8 runs, each main effect aliased with three 2FIs.
    let run = plateau(&["analyze", "--json"])
        .arg_path(&example("dissolution-youden/study.yaml"))
        .ok();
    let doc = json_of(&run.stdout);
    let aliases = doc["design"]["aliases"].as_array().unwrap();
    assert_eq!(aliases.len(), 7);
    for a in aliases {
        let chain = a["chain"].as_array().unwrap();
        assert_eq!(chain.len(), 4, "{a}");
        assert!(
            chain
                .iter()
                .skip(1)
                .all(|t| t.as_array().unwrap().len() == 2),
            "{a}"
        );
    }
    assert_eq!(doc["design"]["youden"], true);
}

#[test]
fn a_seven_factor_fraction_in_eight_runs_is_recognised_as_the_youden_design() {
    let dir = tempfile::tempdir().unwrap();
    let text = std::fs::read_to_string(example("dissolution-youden/study.yaml"))
        .unwrap()
        .replace("kind: youden", "kind: fractional-factorial\n  runs: 8");
    std::fs::write(dir.path().join("study.yaml"), text).unwrap();
    std::fs::copy(
        example("dissolution-youden/results.csv"),
        dir.path().join("results.csv"),
    )
    .unwrap();
    let run = plateau(&["analyze", "--json"])
        .arg_path(&dir.path().join("study.yaml"))
        .ok();
    let doc = json_of(&run.stdout);
    assert_eq!(doc["design"]["youden"], true);
    assert_eq!(doc["design"]["resolution"], 3);
}

#[test]
fn plackett_burman_dummy_columns_fill_the_unassigned_columns() {
    let run = plateau(&["analyze", "--json"])
        .arg_path(&example("lc-impurities-pb12/study.yaml"))
        .ok();
    let doc = json_of(&run.stdout);
    assert_eq!(doc["design"]["two_level_runs"], 12);
    assert_eq!(
        doc["design"]["dummies"],
        serde_json::json!(["d1", "d2", "d3"])
    );
    // 12-run Plackett–Burman: every 2FI of two other factors correlates ±1/3 with a main effect
    // (common practice; checked on the array itself in the design unit tests).
    let partial = doc["design"]["partial_aliases"].as_array().unwrap();
    assert!(!partial.is_empty());
    for p in partial {
        let r = p["correlation"].as_f64().unwrap().abs();
        assert!((r - 1.0 / 3.0).abs() < 1e-12, "{p}");
    }
}

#[test]
fn too_many_factors_for_the_plackett_burman_size_is_an_error_naming_the_needed_size() {
    let dir = tempfile::tempdir().unwrap();
    let text = std::fs::read_to_string(example("lc-impurities-pb12/study.yaml"))
        .unwrap()
        .replace("  dummies: 3\n", "  runs: 8\n");
    std::fs::write(dir.path().join("study.yaml"), text).unwrap();
    let run = plateau(&["check"])
        .arg_path(&dir.path().join("study.yaml"))
        .code(1);
    assert!(run.stderr.contains("design.runs"), "{}", run.stderr);
    assert!(
        run.stderr.contains("expected runs of at least 12"),
        "{}",
        run.stderr
    );
}

#[test]
fn the_same_seed_gives_the_same_run_sheet_and_another_seed_another() {
    let study = example("hplc-assay/study.yaml");
    let a = plateau(&["design"]).arg_path(&study).ok().stdout;
    let b = plateau(&["design"]).arg_path(&study).ok().stdout;
    assert_eq!(a, b);
    let dir = tempfile::tempdir().unwrap();
    let other = std::fs::read_to_string(&study)
        .unwrap()
        .replace("seed: 20261118", "seed: 1");
    std::fs::write(dir.path().join("study.yaml"), other).unwrap();
    let c = plateau(&["design"])
        .arg_path(&dir.path().join("study.yaml"))
        .ok()
        .stdout;
    assert_ne!(a, c);
}

#[test]
fn a_filled_in_run_sheet_reads_back_as_the_results_file() {
    let dir = tempfile::tempdir().unwrap();
    let study = std::fs::read_to_string(example("hplc-assay/study.yaml"))
        .unwrap()
        .replace("file: results.csv", "file: sheet.csv");
    std::fs::write(dir.path().join("study.yaml"), &study).unwrap();
    let sheet = plateau(&["design"])
        .arg_path(&dir.path().join("study.yaml"))
        .ok()
        .stdout;
    // Fill the empty response columns from the example's results, keyed by run id.
    let results = std::fs::read_to_string(example("hplc-assay/results.csv")).unwrap();
    let values: std::collections::BTreeMap<String, String> = results
        .lines()
        .skip(1)
        .map(|l| {
            let (run, rest) = l.split_once(',').unwrap();
            (run.to_string(), rest.to_string())
        })
        .collect();
    let mut filled = String::new();
    for (i, line) in sheet.lines().enumerate() {
        if i == 0 {
            filled.push_str(line);
        } else {
            let run = line.split(',').next().unwrap();
            let stem = line.trim_end_matches(',');
            filled.push_str(&format!("{stem},{}", values[run]));
        }
        filled.push('\n');
    }
    std::fs::write(dir.path().join("sheet.csv"), filled).unwrap();
    let from_sheet = plateau(&["analyze", "--json"])
        .arg_path(&dir.path().join("study.yaml"))
        .ok();
    let original = plateau(&["analyze", "--json"])
        .arg_path(&example("hplc-assay/study.yaml"))
        .ok();
    let a = json_of(&from_sheet.stdout);
    let b = json_of(&original.stdout);
    assert_eq!(a["responses"], b["responses"]);
}

#[test]
fn a_run_sheet_setting_that_differs_from_the_plan_is_an_error() {
    let dir = tempfile::tempdir().unwrap();
    let study = std::fs::read_to_string(example("hplc-assay/study.yaml"))
        .unwrap()
        .replace("file: results.csv", "file: sheet.csv");
    std::fs::write(dir.path().join("study.yaml"), &study).unwrap();
    let sheet = plateau(&["design", "--coded"])
        .arg_path(&dir.path().join("study.yaml"))
        .ok()
        .stdout;
    let mut lines: Vec<String> = sheet.lines().map(str::to_string).collect();
    // Fill every response with 1, then flip the first factor of the second data row.
    for l in lines.iter_mut().skip(1) {
        *l = format!("{},1,1", l.trim_end_matches(','));
    }
    let parts: Vec<String> = lines[2].split(',').map(str::to_string).collect();
    let flipped = if parts[2] == "1" { "-1" } else { "1" };
    lines[2] = std::iter::once(parts[0].clone())
        .chain(std::iter::once(parts[1].clone()))
        .chain(std::iter::once(flipped.to_string()))
        .chain(parts[3..].iter().cloned())
        .collect::<Vec<_>>()
        .join(",");
    std::fs::write(dir.path().join("sheet.csv"), lines.join("\n") + "\n").unwrap();
    let run = plateau(&["check"])
        .arg_path(&dir.path().join("study.yaml"))
        .code(1);
    assert!(run.stderr.contains("sheet.csv:3: temp:"), "{}", run.stderr);
    assert!(
        run.stderr.contains("differs from the plan"),
        "{}",
        run.stderr
    );
}

#[test]
fn the_run_sheet_export_never_overwrites_without_force() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("sheet.csv");
    std::fs::write(&out, "keep me").unwrap();
    let run = plateau(&["design", "-o"])
        .arg_path(&out)
        .arg_path(&example("hplc-assay/study.yaml"))
        .code(1);
    assert!(run.stderr.contains("--force"), "{}", run.stderr);
    assert_eq!(std::fs::read_to_string(&out).unwrap(), "keep me");
    // --force replaces only a run sheet plateau could have written.
    plateau(&["design", "--force", "-o"])
        .arg_path(&out)
        .arg_path(&example("hplc-assay/study.yaml"))
        .code(1);
    assert_eq!(std::fs::read_to_string(&out).unwrap(), "keep me");
    std::fs::remove_file(&out).unwrap();
    plateau(&["design", "-o"])
        .arg_path(&out)
        .arg_path(&example("hplc-assay/study.yaml"))
        .ok();
    plateau(&["design", "--force", "-o"])
        .arg_path(&out)
        .arg_path(&example("hplc-assay/study.yaml"))
        .ok();
    assert!(
        std::fs::read_to_string(&out)
            .unwrap()
            .starts_with("run,order,temp,ph,flow,assay,resolution")
    );
}

#[test]
fn every_starter_study_is_accepted_by_check_and_never_overwritten() {
    let dir = tempfile::tempdir().unwrap();
    for kind in [
        "full-factorial",
        "fractional-factorial",
        "plackett-burman",
        "youden",
        "explicit",
    ] {
        let file = dir.path().join(format!("{kind}.yaml"));
        plateau(&["new", "--kind", kind]).arg_path(&file).ok();
        let run = plateau(&["check"]).arg_path(&file).ok();
        assert!(
            run.stdout.contains("no results yet"),
            "{kind}: {}",
            run.stdout
        );
        plateau(&["new", "--kind", kind]).arg_path(&file).code(1);
    }
}

#[test]
fn a_folded_over_resolution_three_design_has_resolution_four() {
    // Box, Hunter & Hunter (2005) ch. 6: the full fold-over of a resolution III fraction
    // frees main effects from two-factor interactions (resolution IV).
    let dir = tempfile::tempdir().unwrap();
    let text = std::fs::read_to_string(example("dissolution-youden/study.yaml"))
        .unwrap()
        .replace(
            "kind: youden",
            "kind: fractional-factorial\n  runs: 8\n  foldover: true",
        )
        .replace("file: results.csv", "runs: []");
    std::fs::write(dir.path().join("study.yaml"), text).unwrap();
    let sheet = plateau(&["design"])
        .arg_path(&dir.path().join("study.yaml"))
        .ok()
        .stdout;
    assert_eq!(sheet.lines().count(), 17, "16 runs and the header");
}

#[test]
fn an_interaction_listed_under_figures_gets_its_plot() {
    let dir = tempfile::tempdir().unwrap();
    for f in ["study.yaml", "results.csv"] {
        std::fs::copy(
            example(&format!("gc-ethanol-fractional/{f}")),
            dir.path().join(f),
        )
        .unwrap();
    }
    let study = dir.path().join("study.yaml");
    let mut text = std::fs::read_to_string(&study).unwrap();
    text.push_str("figures:\n  interactions: [\"flow*split\"]\n");
    std::fs::write(&study, text).unwrap();
    plateau(&["report", "--no-pdf"]).arg_path(&study).ok();
    let svg = dir
        .path()
        .join("study-report/interaction-ethanol-flow-split.svg");
    assert!(std::fs::read_to_string(svg).unwrap().starts_with("<svg"));
    // A term that is not a two-factor interaction is refused with its field.
    let bad = std::fs::read_to_string(&study)
        .unwrap()
        .replace("flow*split", "flow");
    std::fs::write(&study, bad).unwrap();
    let run = plateau(&["check"]).arg_path(&study).code(1);
    assert!(
        run.stderr.contains("figures.interactions[0]"),
        "{}",
        run.stderr
    );
}
