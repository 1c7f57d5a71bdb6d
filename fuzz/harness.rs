//! The fuzz harnesses, shared by the cargo-fuzz targets in `fuzz_targets/` and by the stable
//! smoke test `tests/suite/fuzz_smoke.rs`, so that the committed corpus is replayed by `cargo test`
//! through exactly the code the long fuzz runs exercised.
//!
//! Every harness takes arbitrary bytes and must return normally: an error from plateau is a
//! correct outcome, a panic, an abort or a hang is a bug. Only `std` and `plateau` are used, so
//! the file compiles both inside the fuzz crate and as a module of an integration test.
#![allow(dead_code)] // each fuzz target uses one harness

use std::fmt::Write as _;
use std::path::{Path, PathBuf};

use plateau::files::InMemory;
use plateau::measurements;
use plateau::report;

/// How far an input got through the pipeline before plateau refused it (or got to the end).
///
/// The fuzz targets ignore it; the smoke test uses it to check that the corpus reaches every
/// stage, so that a harness that refuses everything cannot pass unnoticed.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
pub enum Reached {
    /// Refused before parsing (not UTF-8, or not a study file).
    Nothing,
    /// Parsed and schema-checked.
    Parsed,
    /// Passed the semantic checks.
    Loaded,
    /// Planned.
    Planned,
    /// Its results were read.
    Read,
    /// Analysed.
    Analysed,
    /// The report files were rendered.
    Rendered,
}

/// Study loader: bytes → UTF-8 → `study::load::parse`; a file that parses is then loaded (the
/// semantic checks), planned, its results read (inline, or a CSV file it names, which does not
/// exist) and analysed — all in memory.
pub fn study_loader(data: &[u8]) -> Reached {
    let Ok(text) = std::str::from_utf8(data) else {
        // Non-UTF-8 bytes must be refused by the decoder with a position, never a panic.
        let _ = plateau::study::load::decode(data, "study.yaml");
        return Reached::Nothing;
    };
    if plateau::study::load::parse(text, "study.yaml").is_err() {
        return Reached::Nothing;
    }
    let files = InMemory::new().with("study.yaml", data);
    let Ok(study) = plateau::pipeline::load_in(&files, Path::new("study.yaml")) else {
        return Reached::Parsed;
    };
    let Ok(design) = plateau::design::plan(&study) else {
        return Reached::Loaded;
    };
    let Ok(values) = measurements::read(&files, &study, &design) else {
        return Reached::Planned;
    };
    match plateau::analysis::analyse(&study, &design, &values) {
        Ok(_) => Reached::Analysed,
        Err(_) => Reached::Read,
    }
}

/// The fixed study of the results-CSV harness: the HPLC assay example (3 numeric factors,
/// 8 + 3 runs, responses `assay` and `resolution`, results in `results.csv`).
const CSV_STUDY: &str = include_str!("../examples/hplc-assay/study.yaml");

/// The planned HPLC study, kept for the thread's life: planning it once instead of per input
/// makes the CSV reader, not the YAML parser, the code under test.
struct CsvFixture {
    study: plateau::study::Study,
    design: plateau::design::Design,
}

thread_local! {
    static CSV_FIXTURE: std::cell::RefCell<Option<CsvFixture>> = const { std::cell::RefCell::new(None) };
}

fn csv_fixture() -> CsvFixture {
    let files = InMemory::new().with("study.yaml", CSV_STUDY);
    // The example study is valid; failing to plan it is a harness bug, not a finding.
    let (study, design) = plateau::pipeline::plan_in(&files, Path::new("study.yaml"))
        .unwrap_or_else(|e| panic!("the fixed example study no longer plans: {e:?}"));
    CsvFixture { study, design }
}

/// Results CSV reader: the HPLC example study with arbitrary bytes as its `results.csv`, then
/// `measurements::read` and, when the file is accepted, the analysis.
pub fn results_csv(data: &[u8]) -> Reached {
    CSV_FIXTURE.with(|cell| {
        let mut slot = cell.borrow_mut();
        let fixture = slot.get_or_insert_with(csv_fixture);
        let files = InMemory::new().with("results.csv", data);
        let (study, design) = (&fixture.study, &fixture.design);
        let Ok(values) = measurements::read(&files, study, design) else {
            return Reached::Planned;
        };
        match plateau::analysis::analyse(study, design, &values) {
            Ok(_) => Reached::Analysed,
            Err(_) => Reached::Read,
        }
    })
}

/// Analysis: a small valid study derived from the bytes (2–5 factors, a design kind, nominal
/// runs, criteria, arbitrary finite responses), then the whole pipeline and the report files
/// (no typesetter).
pub fn analysis(data: &[u8]) -> Reached {
    let mut input = Input::new(data);
    let spec = StudySpec::derive(&mut input);
    let path = Path::new("study.yaml");
    // First the plan alone, to learn the run ids the results must name.
    let files = InMemory::new().with(path, spec.yaml(None));
    let Ok((_, design)) = plateau::pipeline::plan_in(&files, path) else {
        return Reached::Nothing;
    };
    let ids: Vec<String> = design.runs.iter().map(|r| r.id.0.clone()).collect();
    let values = spec.values(&mut input, ids.len());
    let text = spec.yaml(Some((&ids, &values)));
    let files = InMemory::new().with(path, text);
    let Ok(evaluated) = plateau::pipeline::evaluate_in(&files, path) else {
        return Reached::Planned;
    };
    match report::render_files(&evaluated, &report::Options::default()) {
        Ok(_) => Reached::Rendered,
        Err(_) => Reached::Analysed,
    }
}

/// Reads the fuzz bytes as a stream of small decisions; once exhausted every read is 0, so a
/// short input still gives a complete (simple) study.
struct Input<'a> {
    data: &'a [u8],
    at: usize,
}

impl<'a> Input<'a> {
    fn new(data: &'a [u8]) -> Self {
        Self { data, at: 0 }
    }

    fn byte(&mut self) -> u8 {
        let b = self.data.get(self.at).copied().unwrap_or(0);
        self.at += 1;
        b
    }

    /// A value in `0..n` (n ≥ 1).
    fn below(&mut self, n: u8) -> u8 {
        self.byte() % n.max(1)
    }

    fn flag(&mut self) -> bool {
        self.byte() & 1 == 1
    }

    fn u64(&mut self) -> u64 {
        (0..8).fold(0u64, |acc, _| (acc << 8) | u64::from(self.byte()))
    }

    /// Any finite f64, its bits taken whole (subnormals, ±0, values near f64::MAX).
    fn raw_finite(&mut self) -> f64 {
        let v = f64::from_bits(self.u64());
        if v.is_finite() { v } else { 0.0 }
    }

    /// A response scale: ordinary, huge, tiny, or extreme.
    fn scale(&mut self) -> f64 {
        match self.below(6) {
            0 => 1.0,
            1 => 100.0,
            2 => 1e12,
            3 => 1e-12,
            4 => 1e300,
            _ => 1e-300,
        }
    }
}

#[derive(Debug, Clone, Copy, PartialEq)]
enum Kind {
    Full,
    Fractional,
    PlackettBurman,
    Youden,
    Explicit,
}

#[derive(Debug, Clone)]
enum FactorLevels {
    Delta { nominal: f64, delta: f64 },
    LowHigh { nominal: f64, low: f64, high: f64 },
    Categorical,
}

#[derive(Debug, Clone)]
enum Rule {
    Limit { limit: f64, absolute: bool },
    Lenth,
    Dong,
    Dummies,
    Precision { s: f64, df: f64, determinations: u8 },
    Anova,
    Negligible,
    Suitability { min: Option<f64>, max: Option<f64> },
}

/// How the values of one response are made.
#[derive(Debug, Clone, Copy)]
enum Values {
    /// All runs equal (zero effects, zero pseudo standard error).
    Identical,
    /// One factor's effect and nothing else.
    OneEffect,
    /// Scale × (small integers), possibly negative.
    Scaled,
    /// Whole f64 bit patterns.
    Raw,
}

/// Run ids and, per run, per response, the determinations.
type InlineResults<'a> = (&'a [String], &'a [Vec<Vec<f64>>]);

#[derive(Debug, Clone)]
struct StudySpec {
    factors: Vec<FactorLevels>,
    kind: Kind,
    /// Fractional: generators by index into `GENERATORS`, or a catalogue choice.
    fractional: u8,
    pb_runs: Option<u8>,
    dummies: u8,
    center_points: u8,
    replicates: u8,
    seed: Option<u64>,
    placement: u8,
    drift: u8,
    foldover: bool,
    /// Explicit: which rows of the full factorial to drop (bit mask) and extra nominal rows.
    drop_rows: u32,
    explicit_nominal: u8,
    nonorthogonal: bool,
    responses: Vec<(u8, u8, Values, f64)>,
    rules: Vec<(usize, Rule)>,
    determinations: u8,
    exclude: Option<u8>,
}

impl StudySpec {
    fn derive(input: &mut Input<'_>) -> Self {
        let k = 2 + usize::from(input.below(4));
        let factors = (0..k)
            .map(|_| match input.below(4) {
                0 => FactorLevels::Categorical,
                1 => {
                    let low = f64::from(input.byte()) - 100.0;
                    let width = 1.0 + f64::from(input.byte());
                    let nominal = low + width * f64::from(input.below(5)) / 4.0;
                    FactorLevels::LowHigh {
                        nominal,
                        low,
                        high: low + width,
                    }
                }
                _ => FactorLevels::Delta {
                    nominal: f64::from(input.byte()) * input.scale(),
                    delta: (1.0 + f64::from(input.byte())) / 10.0,
                },
            })
            .collect();
        let kind = match input.below(5) {
            0 => Kind::Full,
            1 => Kind::Fractional,
            2 => Kind::PlackettBurman,
            3 => Kind::Youden,
            _ => Kind::Explicit,
        };
        let fractional = input.byte();
        let pb_runs = input.flag().then(|| input.byte());
        let dummies = input.below(4);
        let center_points = input.below(5);
        let replicates = 1 + input.below(2);
        let seed = input.flag().then(|| input.u64());
        let placement = input.below(6);
        let drift = input.below(3);
        let foldover = input.below(4) == 0;
        let drop_rows = if input.below(4) == 0 {
            u32::from(input.byte())
        } else {
            0
        };
        let explicit_nominal = input.below(3);
        let nonorthogonal = input.flag();
        let n_responses = 1 + usize::from(input.below(2));
        let responses = (0..n_responses)
            .map(|_| {
                let values = match input.below(5) {
                    0 => Values::Identical,
                    1 => Values::OneEffect,
                    2 => Values::Raw,
                    _ => Values::Scaled,
                };
                (input.below(3), input.below(4), values, input.scale())
            })
            .collect();
        let n_rules = usize::from(input.below(4));
        let rules = (0..n_rules)
            .map(|_| {
                let response = usize::from(input.below(2)) % n_responses;
                let rule = match input.below(9) {
                    0 | 1 => Rule::Limit {
                        limit: (1.0 + f64::from(input.byte())) / 10.0,
                        absolute: input.flag(),
                    },
                    2 => Rule::Lenth,
                    3 => Rule::Dong,
                    4 => Rule::Dummies,
                    5 => Rule::Precision {
                        s: match input.below(3) {
                            0 => (1.0 + f64::from(input.byte())) / 100.0,
                            1 => 1e-300,
                            _ => 1e12,
                        },
                        df: 1.0 + f64::from(input.below(30)),
                        determinations: 1 + input.below(3),
                    },
                    6 => Rule::Anova,
                    7 => Rule::Negligible,
                    _ => Rule::Suitability {
                        min: input.flag().then(|| f64::from(input.byte()) - 50.0),
                        max: input.flag().then(|| f64::from(input.byte()) + 210.0),
                    },
                };
                (response, rule)
            })
            .collect();
        let determinations = 1 + input.below(2);
        let exclude = (input.below(6) == 0).then(|| input.byte());
        Self {
            factors,
            kind,
            fractional,
            pb_runs,
            dummies,
            center_points,
            replicates,
            seed,
            placement,
            drift,
            foldover,
            drop_rows,
            explicit_nominal,
            nonorthogonal,
            responses,
            rules,
            determinations,
            exclude,
        }
    }

    fn factor_id(i: usize) -> String {
        format!("f{}", i + 1)
    }

    fn response_id(i: usize) -> String {
        format!("y{}", i + 1)
    }

    /// The study file; with `results`, inline results for the given run ids.
    fn yaml(&self, results: Option<InlineResults<'_>>) -> String {
        let k = self.factors.len();
        let mut y = String::new();
        y.push_str("schema: 1\nstudy:\n  id: FZ-1\n  title: Fuzzed study\n  method: FZ method 1\n");
        y.push_str("  analyst: A. Fuzzer\n  date: 2026-01-31\nfactors:\n");
        for (i, f) in self.factors.iter().enumerate() {
            let id = Self::factor_id(i);
            let _ = write!(y, "  - {{ id: {id}, name: Factor {id}");
            let _ = match f {
                FactorLevels::Categorical => write!(y, ", levels: [lot {id} a, lot {id} b]"),
                FactorLevels::Delta { nominal, delta } => {
                    write!(
                        y,
                        ", unit: u, nominal: {nominal:?}, delta: {delta:?}, routine: {:?}",
                        delta / 2.0
                    )
                }
                FactorLevels::LowHigh { nominal, low, high } => {
                    write!(y, ", nominal: {nominal:?}, low: {low:?}, high: {high:?}")
                }
            };
            y.push_str(" }\n");
        }
        y.push_str("design:\n");
        let generated = self.kind != Kind::Explicit;
        match self.kind {
            Kind::Full => y.push_str("  kind: full-factorial\n"),
            Kind::Fractional => {
                y.push_str("  kind: fractional-factorial\n");
                self.fractional_lines(&mut y, k);
            }
            Kind::PlackettBurman => {
                y.push_str("  kind: plackett-burman\n");
                if let Some(r) = self.pb_runs {
                    let runs = [8, 12, 16, 20, 24][usize::from(r) % 5];
                    let _ = writeln!(y, "  runs: {runs}");
                }
                if self.dummies > 0 {
                    let _ = writeln!(y, "  dummies: {}", self.dummies);
                }
            }
            Kind::Youden => {
                y.push_str("  kind: youden\n");
                if self.dummies > 0 {
                    let _ = writeln!(y, "  dummies: {}", self.dummies);
                }
            }
            Kind::Explicit => {
                y.push_str("  kind: explicit\n");
                if self.nonorthogonal {
                    y.push_str("  allow-nonorthogonal: true\n");
                }
                y.push_str("  runs:\n");
                let mut id = 0;
                for row in 0..(1u32 << k) {
                    if self.drop_rows & (1 << (row % 32)) != 0 && row < 8 {
                        continue;
                    }
                    id += 1;
                    let _ = write!(y, "    - {{ run: {id}");
                    for j in 0..k {
                        let level = if row & (1 << j) != 0 { 1 } else { -1 };
                        let _ = write!(y, ", {}: {level}", Self::factor_id(j));
                    }
                    y.push_str(" }\n");
                }
                for _ in 0..self.explicit_nominal {
                    id += 1;
                    let _ = write!(y, "    - {{ run: {id}");
                    for j in 0..k {
                        let _ = write!(y, ", {}: 0", Self::factor_id(j));
                    }
                    y.push_str(" }\n");
                }
            }
        }
        if generated {
            if self.center_points > 0 {
                let _ = writeln!(y, "  center-points: {}", self.center_points);
            }
            if self.replicates > 1 {
                let _ = writeln!(y, "  replicates: {}", self.replicates);
            }
        }
        if let Some(seed) = self.seed {
            let _ = writeln!(y, "  randomize: {{ seed: {seed} }}");
        }
        let placement = [
            "spread",
            "first",
            "last",
            "random",
            "{ every: 4 }",
            "spread",
        ];
        if let Some(p) = placement.get(usize::from(self.placement)) {
            let _ = writeln!(y, "  nominal-runs: {p}");
        }
        match self.drift {
            1 => y.push_str("  drift-correction: additive\n"),
            2 => y.push_str("  drift-correction: relative\n"),
            _ => {}
        }
        y.push_str("responses:\n");
        for (i, (percent_of, role, _, _)) in self.responses.iter().enumerate() {
            let id = Self::response_id(i);
            let _ = write!(y, "  - {{ id: {id}, name: Response {id}, unit: mg");
            match percent_of {
                1 => y.push_str(", percent-of: nominal"),
                2 => y.push_str(", percent-of: mean"),
                _ => {}
            }
            if *role == 1 {
                y.push_str(", role: suitability");
            }
            if *role == 2 {
                y.push_str(", decimals: 3");
            }
            y.push_str(" }\n");
        }
        if !self.rules.is_empty() {
            y.push_str("acceptance:\n");
        }
        for (response, rule) in &self.rules {
            let id = Self::response_id(*response);
            let _ = write!(y, "  - {{ response: {id}, ");
            let _ = match rule {
                Rule::Limit { limit, absolute } => write!(
                    y,
                    "effect-limit: {limit:?}{}",
                    if *absolute { ", unit: absolute" } else { "" }
                ),
                Rule::Lenth => write!(y, "significance: {{ method: lenth }}"),
                Rule::Dong => write!(y, "significance: {{ method: dong, alpha: 0.01 }}"),
                Rule::Dummies => write!(y, "significance: {{ method: dummies }}"),
                Rule::Anova => write!(y, "significance: {{ method: anova }}"),
                Rule::Negligible => {
                    let all: Vec<String> = (0..k).map(Self::factor_id).collect();
                    write!(
                        y,
                        "significance: {{ method: negligible, terms: [\"{}\"] }}",
                        all.join("×")
                    )
                }
                Rule::Precision {
                    s,
                    df,
                    determinations,
                } => write!(
                    y,
                    "significance: {{ method: precision, s: {s:?}, df: {df:?}, source: fuzz, determinations: {determinations} }}"
                ),
                Rule::Suitability { min, max } => {
                    let mut parts = Vec::new();
                    if let Some(m) = min {
                        parts.push(format!("min: {m:?}"));
                    }
                    if let Some(m) = max {
                        parts.push(format!("max: {m:?}"));
                    }
                    if parts.is_empty() {
                        parts.push("min: 0.0".into());
                    }
                    write!(y, "{}", parts.join(", "))
                }
            };
            y.push_str(" }\n");
        }
        if let (Some(e), Some((ids, _))) = (self.exclude, results)
            && let Some(run) = ids.get(usize::from(e) % ids.len().max(1))
        {
            let _ = writeln!(
                y,
                "excluded:\n  - {{ run: {run}, reason: fuzzed exclusion }}"
            );
        }
        if let Some((ids, values)) = results {
            y.push_str("results:\n");
            if self.determinations > 1 {
                let _ = writeln!(y, "  determinations: {}", self.determinations);
            }
            y.push_str("  runs:\n");
            for (id, per_response) in ids.iter().zip(values) {
                let _ = write!(y, "    - {{ run: {id}");
                for (r, vals) in per_response.iter().enumerate() {
                    let _ = write!(y, ", {}: ", Self::response_id(r));
                    if self.determinations > 1 {
                        let list: Vec<String> = vals.iter().map(|v| format!("{v:?}")).collect();
                        let _ = write!(y, "[{}]", list.join(", "));
                    } else if let Some(v) = vals.first() {
                        let _ = write!(y, "{v:?}");
                    }
                }
                y.push_str(" }\n");
            }
        }
        y
    }

    fn fractional_lines(&self, y: &mut String, k: usize) {
        // Generators from Box, Hunter & Hunter (2005) table 6.14 forms (common practice), by k.
        let generators: &[&str] = match (k, self.fractional % 3) {
            (3, 0) => &["f3 = f1*f2"],
            (3, 1) => &["f3 = -f1*f2"],
            (4, 0) => &["f4 = f1*f2*f3"],
            (4, 1) => &["f3 = f1*f2", "f4 = f1*f2"], // two identical columns: must be refused
            (5, 0) => &["f5 = f1*f2*f3*f4"],
            (5, 1) => &["f4 = f1*f2", "f5 = f1*f3"],
            _ => &[],
        };
        if !generators.is_empty() {
            let quoted: Vec<String> = generators.iter().map(|g| format!("\"{g}\"")).collect();
            let _ = writeln!(y, "  generators: [{}]", quoted.join(", "));
        } else if self.fractional & 4 != 0 {
            let _ = writeln!(y, "  resolution: {}", 3 + (self.fractional >> 3) % 3);
        } else {
            let _ = writeln!(
                y,
                "  runs: {}",
                [4, 8, 16][usize::from(self.fractional >> 3) % 3]
            );
        }
        if self.foldover {
            y.push_str("  foldover: true\n");
        }
    }

    /// Values per run (in the order of `ids`), per response, per determination.
    fn values(&self, input: &mut Input<'_>, runs: usize) -> Vec<Vec<Vec<f64>>> {
        let det = usize::from(self.determinations);
        let base = 100.0 + f64::from(input.byte());
        (0..runs)
            .map(|run| {
                self.responses
                    .iter()
                    .map(|(_, _, kind, scale)| {
                        (0..det)
                            .map(|_| match kind {
                                Values::Identical => base * scale,
                                Values::OneEffect => {
                                    (base + if run % 2 == 0 { 1.0 } else { -1.0 }) * scale
                                }
                                Values::Scaled => {
                                    (f64::from(input.byte() as i8)
                                        + base * f64::from(input.below(2)))
                                        * scale
                                }
                                Values::Raw => input.raw_finite(),
                            })
                            .collect()
                    })
                    .collect()
            })
            .collect()
    }
}

/// Every file of a corpus folder, in name order (for the smoke test).
pub fn corpus_files(dir: &Path) -> Vec<PathBuf> {
    let mut files: Vec<PathBuf> = std::fs::read_dir(dir)
        .map(|entries| {
            entries
                .filter_map(Result::ok)
                .map(|e| e.path())
                .filter(|p| p.is_file())
                .collect()
        })
        .unwrap_or_default();
    files.sort();
    files
}
