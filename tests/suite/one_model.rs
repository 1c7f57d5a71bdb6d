//! One model per response, through the binary: the guards and conventions of the fit that
//! the reference cases of `plateau verify` (verification/cases/) do not already pin down.
//! Numbers are checked by hand from the printed data (each test says how).

use std::path::PathBuf;

use crate::common::{json_of, plateau};

/// A 2² study of one assay response with `extra` YAML appended and the four runs' values.
fn study(dir: &tempfile::TempDir, body: &str) -> PathBuf {
    let path = dir.path().join("study.yaml");
    std::fs::write(&path, body).unwrap();
    path
}

const HEAD: &str = "schema: 1
study:
  id: OM-1
  title: One-model checks
  method: TM-1
  analyst: A. Tester
  date: 2026-11-18
";

/// The plain full factorial of [`two_factor`], its one assay response, and four run values.
const FULL: &str = "  kind: full-factorial";
const ASSAY: &str = "  - { id: assay, name: Assay, percent-of: mean }";
const RUNS: &str = "    - {run: 1, assay: 99.0}\n    - {run: 2, assay: 99.4}\n    - {run: 3, assay: 99.2}\n    - {run: 4, assay: 99.6}";

fn two_factor(design: &str, responses: &str, acceptance: &str, runs: &str) -> String {
    format!(
        "{HEAD}factors:
  - {{ id: temp, name: Column temperature, unit: °C, nominal: 35, delta: 2 }}
  - {{ id: ph, name: Buffer pH, nominal: 3.0, delta: 0.1 }}
design:
{design}
responses:
{responses}
{acceptance}
results:
  runs:
{runs}
"
    )
}

#[test]
fn a_zero_reference_leaves_percent_effects_undefined_instead_of_failing() {
    // Two-level runs average 0 (1.0 − 1.5 + 0.5 + 0.0 = 0): the model intercept is 0.
    let dir = tempfile::tempdir().unwrap();
    let path = study(
        &dir,
        &two_factor(
            FULL,
            ASSAY,
            "acceptance:\n  - { response: assay, effect-limit: 2.0 }",
            "    - {run: 1, assay: 1.0}\n    - {run: 2, assay: -1.5}\n    - {run: 3, assay: 0.5}\n    - {run: 4, assay: 0.0}",
        ),
    );
    let doc = json_of(&plateau(&["analyze", "--json"]).arg_path(&path).ok().stdout);
    let r = &doc["responses"][0];
    assert!(r["effects"][0]["percent"].is_null());
    assert_eq!(r["verdict"]["outcome"], "not-judged");
    assert!(r["verdict"]["robust"].is_null());
    let kinds: Vec<&str> = r["notes"]
        .as_array()
        .unwrap()
        .iter()
        .filter_map(|n| n["kind"].as_str())
        .collect();
    assert!(kinds.contains(&"percent-undefined"), "{kinds:?}");
    assert!(kinds.contains(&"percent-limit-not-applicable"), "{kinds:?}");
}

#[test]
fn a_response_without_rules_never_blocks_another() {
    // `blank` averages 0 and has no rule; `assay` is judged as usual.
    let dir = tempfile::tempdir().unwrap();
    let path = study(
        &dir,
        &two_factor(
            FULL,
            "  - { id: assay, name: Assay, percent-of: mean }\n  - { id: blank, name: Blank signal, percent-of: mean }",
            "acceptance:\n  - { response: assay, effect-limit: 2.0 }",
            "    - {run: 1, assay: 99.0, blank: 1.0}\n    - {run: 2, assay: 99.4, blank: -1.0}\n    - {run: 3, assay: 99.2, blank: -1.0}\n    - {run: 4, assay: 99.6, blank: 1.0}",
        ),
    );
    let doc = json_of(&plateau(&["analyze", "--json"]).arg_path(&path).ok().stdout);
    assert_eq!(doc["responses"][0]["verdict"]["outcome"], "robust");
    assert_eq!(doc["responses"][1]["verdict"]["outcome"], "not-judged");
}

#[test]
fn a_negative_reference_keeps_the_sign_of_each_effect() {
    // Runs −10.0, −9.0, −10.0, −9.0: E(temp) = +1.0, intercept −9.5, %E = 100·1/9.5 > 0.
    let dir = tempfile::tempdir().unwrap();
    let path = study(
        &dir,
        &two_factor(
            FULL,
            "  - { id: shift, name: Retention shift, unit: s, percent-of: mean }",
            "",
            "    - {run: 1, shift: -10.0}\n    - {run: 2, shift: -9.0}\n    - {run: 3, shift: -10.0}\n    - {run: 4, shift: -9.0}",
        ),
    );
    let doc = json_of(&plateau(&["analyze", "--json"]).arg_path(&path).ok().stdout);
    let temp = &doc["responses"][0]["effects"][0];
    assert_eq!(temp["label"], "temp");
    let percent = temp["percent"].as_f64().unwrap();
    assert!((percent - 100.0 / 9.5).abs() < 1e-9, "{percent}");
}

#[test]
fn lenth_refuses_fewer_than_seven_contrasts() {
    // A 2² has three contrasts; Lenth (1989) starts at m = 7 (the README's methods table).
    let dir = tempfile::tempdir().unwrap();
    let path = study(
        &dir,
        &two_factor(
            FULL,
            ASSAY,
            "acceptance:\n  - { response: assay, significance: { method: lenth } }",
            RUNS,
        ),
    );
    let run = plateau(&["analyze", "--json"]).arg_path(&path).code(1);
    assert!(
        run.stderr.contains("acceptance[0].significance"),
        "{}",
        run.stderr
    );
    assert!(
        run.stderr.contains("got 3, need at least 7"),
        "{}",
        run.stderr
    );
}

#[test]
fn a_precision_rule_with_less_than_one_degree_of_freedom_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    let path = study(
        &dir,
        &two_factor(
            FULL,
            ASSAY,
            "acceptance:\n  - { response: assay, significance: { method: precision, s: 0.3, df: 0.5, source: validation report } }",
            RUNS,
        ),
    );
    let run = plateau(&["check"]).arg_path(&path).code(1);
    assert!(run.stderr.contains("significance.df"), "{}", run.stderr);
    assert!(run.stderr.contains("expected at least 1"), "{}", run.stderr);
}

#[test]
fn a_precision_rule_takes_the_results_determinations_and_refuses_another_number() {
    let runs = "    - {run: 1, assay: [99.0, 99.1]}\n    - {run: 2, assay: [99.4, 99.3]}\n    - {run: 3, assay: [99.2, 99.2]}\n    - {run: 4, assay: [99.6, 99.5]}";
    let with = |n: &str| {
        two_factor(
            FULL,
            ASSAY,
            &format!("acceptance:\n  - {{ response: assay, significance: {{ method: precision, s: 0.4, df: 12, source: validation report{n} }} }}"),
            runs,
        )
        .replace("results:\n", "results:\n  determinations: 2\n")
    };
    let dir = tempfile::tempdir().unwrap();
    let path = study(&dir, &with(""));
    let doc = json_of(&plateau(&["analyze", "--json"]).arg_path(&path).ok().stdout);
    // SE(E) = 2s/√(N·n) = 2·0.4/√(4·2) (Vander Heyden et al. 2001 §6.2.2.1), n from results.
    let se = doc["responses"][0]["criteria"][0]["se"].as_f64().unwrap();
    assert!((se - 0.8 / 8f64.sqrt()).abs() < 1e-12, "{se}");
    let path = study(&dir, &with(", determinations: 3"));
    let run = plateau(&["check"]).arg_path(&path).code(1);
    assert!(
        run.stderr.contains("significance.determinations"),
        "{}",
        run.stderr
    );
    assert!(
        run.stderr.contains("`results.determinations` is 2"),
        "{}",
        run.stderr
    );
}

#[test]
fn an_uncorrected_drift_is_flagged() {
    // Nominal runs 100.0, 100.5, 101.0, 101.6, 102.0 at orders 1, 4, 7, 10, 13 rise by about
    // 0.17 per run (p < 0.001 on 3 df); no correction is declared.
    let dir = tempfile::tempdir().unwrap();
    let path = study(
        &dir,
        &two_factor(
            "  kind: full-factorial\n  replicates: 2\n  center-points: 5\n  nominal-runs: { every: 2 }",
            "  - { id: assay, name: Assay, percent-of: nominal }",
            "",
            "    - {run: 1, assay: 100.1}\n    - {run: 2, assay: 100.3}\n    - {run: 3, assay: 100.6}\n    - {run: 4, assay: 100.8}\n    - {run: 5, assay: 101.0}\n    - {run: 6, assay: 101.1}\n    - {run: 7, assay: 101.3}\n    - {run: 8, assay: 101.5}\n    - {run: 9, assay: 100.0}\n    - {run: 10, assay: 100.5}\n    - {run: 11, assay: 101.0}\n    - {run: 12, assay: 101.6}\n    - {run: 13, assay: 102.0}",
        ),
    );
    let doc = json_of(&plateau(&["analyze", "--json"]).arg_path(&path).ok().stdout);
    let r = &doc["responses"][0];
    assert_eq!(r["drift"]["uncorrected_significant"], true);
    assert!(
        r["notes"]
            .as_array()
            .unwrap()
            .iter()
            .any(|n| n["kind"] == "drift-not-corrected"),
        "{}",
        r["notes"]
    );
}

#[test]
fn an_operating_range_never_extends_beyond_the_tested_levels() {
    // temp tested 33 to 43 around a nominal of 35 (asymmetric): E(temp) = 2.0 against an
    // absolute limit of 1.5 gives a width (1.5/2.0)·10 = 7.5 about 35, i.e. 31.25 to 38.75,
    // which is cut back to 33 at the low end.
    let dir = tempfile::tempdir().unwrap();
    let body = two_factor(
        FULL,
        ASSAY,
        "acceptance:\n  - { response: assay, effect-limit: 1.5, unit: absolute, basis: lab rule }",
        "    - {run: 1, assay: 99.0}\n    - {run: 2, assay: 101.0}\n    - {run: 3, assay: 99.0}\n    - {run: 4, assay: 101.0}",
    )
    .replace(
        "nominal: 35, delta: 2 }",
        "nominal: 35, low: 33, high: 43 }",
    );
    let path = study(&dir, &body);
    let doc = json_of(&plateau(&["analyze", "--json"]).arg_path(&path).ok().stdout);
    let range = &doc["responses"][0]["control_ranges"][0];
    assert_eq!(range["factor"], "temp");
    assert_eq!(range["clipped"], true);
    assert_eq!(range["low"].as_f64(), Some(33.0));
    assert!((range["high"].as_f64().unwrap() - 38.75).abs() < 1e-12);
}

#[test]
fn power_of_the_planned_design_matches_the_noncentral_t() {
    // hplc-assay plans 8 two-level runs with s = 0.7 (11 df): SE(E) = 2·0.7/√8, and the
    // power to detect 2.0 % of a level of 100 is 0.9562185536845129 by
    // scipy.stats.nct.sf(t_c, 11, 2/SE) + nct.cdf(−t_c, 11, 2/SE), t_c = t.ppf(0.975, 11)
    // (scipy 1.17.1; Lenth, Am. Stat. 55 (2001) 187–193 for the test).
    let run = plateau(&["power", "--json"])
        .arg_path(&crate::common::example("hplc-assay/study.yaml"))
        .ok();
    let doc = json_of(&run.stdout);
    let assay = &doc["responses"][0];
    assert!((assay["se"].as_f64().unwrap() - 0.4949747468305832).abs() < 1e-12);
    assert!((assay["power"].as_f64().unwrap() - 0.9562185536845129).abs() < 1e-9);
    assert_eq!(doc["responses"][1]["gaps"][0], "no-limit");
    assert!(
        assay["candidates"]
            .as_array()
            .unwrap()
            .iter()
            .any(|c| c["planned"] == true && c["runs"] == 8)
    );
}

#[test]
fn check_warns_when_the_design_cannot_detect_the_limit() {
    // 2² with s = 2 (known): SE(E) = 2 and a limit of 1.0 is detected with about 7 % power.
    let dir = tempfile::tempdir().unwrap();
    let body = two_factor(
        FULL,
        "  - { id: assay, name: Assay, unit: \"%\", percent-of: mean, planning: { sd: 2.0 } }",
        "acceptance:\n  - { response: assay, effect-limit: 1.0, unit: absolute, basis: lab rule }",
        RUNS,
    );
    let path = study(&dir, &body);
    let run = plateau(&["check"]).arg_path(&path).ok();
    assert!(
        run.stderr.contains("warning: response `assay`"),
        "{}",
        run.stderr
    );
    assert!(run.stderr.contains("plateau power"), "{}", run.stderr);
}

/// The half fraction C = AB of `verification/cases/aliased-chain-unresolved.yaml`, whose only
/// relevant column is the chain C = A×B.
fn half_fraction(dir: &tempfile::TempDir) -> PathBuf {
    study(
        dir,
        &format!(
            "{HEAD}factors:
  - {{ id: A, name: Factor A, nominal: 10, delta: 1 }}
  - {{ id: B, name: Factor B, nominal: 20, delta: 1 }}
  - {{ id: C, name: Factor C, nominal: 30, delta: 1 }}
design:
  kind: fractional-factorial
  generators: [\"C = AB\"]
  alias-order: 2
responses:
  - {{ id: assay, name: Assay, unit: \"%\", percent-of: mean }}
acceptance:
  - {{ response: assay, effect-limit: 5.0, basis: lab rule }}
results:
  runs:
    - {{ run: 1, assay: 103.7 }}
    - {{ run: 2, assay: 96.1 }}
    - {{ run: 3, assay: 95.9 }}
    - {{ run: 4, assay: 104.3 }}
"
        ),
    )
}

#[test]
fn follow_up_writes_the_fold_over_runs_as_block_two_and_never_overwrites() {
    let dir = tempfile::tempdir().unwrap();
    let first = half_fraction(&dir);
    let out = dir.path().join("follow.yaml");
    plateau(&["follow-up"])
        .arg_path(&first)
        .arg("-o")
        .arg_path(&out)
        .ok();
    let text = std::fs::read_to_string(&out).unwrap();
    // Block 2 mirrors every run of block 1 (full fold-over of a resolution III fraction).
    assert!(
        text.contains("{ run: 1, block: 1, order: 1, A: -1, B: -1, C: 1 }"),
        "{text}"
    );
    for mirrored in [
        "A: 1, B: 1, C: -1",
        "A: -1, B: 1, C: 1",
        "A: 1, B: -1, C: 1",
        "A: -1, B: -1, C: -1",
    ] {
        assert!(
            text.lines()
                .any(|l| l.contains("block: 2") && l.contains(mirrored)),
            "{mirrored} missing:\n{text}"
        );
    }
    assert!(text.contains("# - { run: 5, assay: }"), "{text}");
    // A second call refuses to replace the file.
    let again = plateau(&["follow-up"])
        .arg_path(&first)
        .arg("-o")
        .arg_path(&out)
        .code(1);
    assert!(again.stderr.contains("already exists"), "{}", again.stderr);
    assert_eq!(std::fs::read_to_string(&out).unwrap(), text);

    // Filled in, the two blocks are analysed together: A×B is separated from C.
    let filled: String = text
        .lines()
        .map(|l| match l.trim_start().strip_prefix("# - { run: ") {
            Some(rest) => {
                let run: u32 = rest.split(',').next().unwrap().trim().parse().unwrap();
                // Mirror runs 5–8 of y = 100 + 4·A·B (A·B unchanged by a full fold) + 0.6.
                let ab = [1.0, -1.0, -1.0, 1.0][(run - 5) as usize];
                format!("    - {{ run: {run}, assay: {} }}", 100.6 + 4.0 * ab)
            }
            None => l.to_string(),
        })
        .collect::<Vec<_>>()
        .join("\n");
    std::fs::write(&out, filled).unwrap();
    let doc = json_of(&plateau(&["analyze", "--json"]).arg_path(&out).ok().stdout);
    let r = &doc["responses"][0];
    assert_eq!(r["verdict"]["outcome"], "not-robust", "{}", r["verdict"]);
    assert_eq!(r["verdict"]["relevant_interactions"][0], "A×B");
    assert!(r["block_effect"]["effect"].is_number());
}

#[test]
fn follow_up_without_an_unresolved_chain_asks_for_a_term() {
    let dir = tempfile::tempdir().unwrap();
    let path = study(
        &dir,
        &two_factor(
            FULL,
            ASSAY,
            "acceptance:\n  - { response: assay, effect-limit: 2.0 }",
            RUNS,
        ),
    );
    let out = dir.path().join("f.yaml");
    let run = plateau(&["follow-up"])
        .arg_path(&path)
        .arg("-o")
        .arg_path(&out)
        .code(1);
    assert!(run.stderr.contains("--separate"), "{}", run.stderr);
    assert!(!out.exists());
}

/// The conclusion of a study as the chapter prints it (section.typ, Typst escapes removed).
fn conclusion_of(path: &std::path::Path, dir: &tempfile::TempDir, name: &str) -> String {
    let out = dir.path().join(name);
    plateau(&["report", "--no-pdf", "-o"])
        .arg_path(&out)
        .arg_path(path)
        .ok();
    let section = std::fs::read_to_string(out.join("section.typ")).unwrap();
    let start = section.find("== Conclusion").expect("a conclusion");
    let end = section[start..]
        .find("== References")
        .map_or(section.len(), |e| start + e);
    section[start..end].replace('\\', "")
}

#[test]
fn a_relevant_interaction_makes_the_chapter_conclude_not_robust() {
    // verification/cases/interaction-verdict.yaml: a full 2³ whose only relevant column is
    // A×B; its study part is written out and reported.
    let case = std::fs::read_to_string(
        crate::common::root().join("verification/cases/interaction-verdict.yaml"),
    )
    .unwrap();
    let study_text: String = case
        .split("\nstudy:\n")
        .nth(1)
        .unwrap()
        .split("\nexpect:")
        .next()
        .unwrap()
        .lines()
        .map(|l| l.strip_prefix("  ").unwrap_or(l))
        .collect::<Vec<_>>()
        .join("\n");
    let dir = tempfile::tempdir().unwrap();
    let path = study(&dir, &study_text);
    let text = conclusion_of(&path, &dir, "r");
    assert!(
        text.contains("The method is not robust over the tested ranges"),
        "{text}"
    );
    assert!(
        text.contains("The interaction Factor A × Factor B exceeded the limit"),
        "{text}"
    );
    assert!(!text.contains("robust for these ranges"), "{text}");
}

#[test]
fn no_example_conclusion_has_a_known_wording_fault() {
    // Faults a review found in earlier chapters (issue "The chapter a reviewer can sign").
    let dir = tempfile::tempdir().unwrap();
    for (i, example) in [
        "hplc-assay",
        "gc-ethanol-fractional",
        "dissolution-youden",
        "lc-impurities-pb12",
    ]
    .iter()
    .enumerate()
    {
        let text = conclusion_of(
            &crate::common::example(&format!("{example}/study.yaml")),
            &dir,
            &format!("r{i}"),
        );
        for fault in [
            "declared before the data",
            "the Lenth",
            "also exceeded",
            "p = 0.000",
            "p = <",
            "`",
            "than it was varied",
            "per run)",
        ] {
            assert!(!text.contains(fault), "{example}: `{fault}` in\n{text}");
        }
    }
}
