//! Timings of the analysis (issue 6, item 4): effects and the whole `analyse` for 2^k full
//! factorials, k = 3..=16, a 48-run Plackett–Burman, and one example from file to analysis.
//!
//! A small harness of our own (std::time::Instant) instead of a benchmarking crate, so the CI
//! build stays lean: each case is warmed up, then repeated until a time budget or a repetition
//! count is reached, and one line gives its median and minimum.
//!
//! `cargo bench --bench analysis` runs everything; `cargo bench --bench analysis -- fwht` runs
//! the cases whose name contains `fwht`. Set `PLATEAU_BENCH_BUDGET_MS` to change the time spent
//! per case (default 1000 ms).

use std::fmt::Write as _;
use std::hint::black_box;
use std::path::{Path, PathBuf};
use std::time::{Duration, Instant};

use plateau::analysis::{self, effects};
use plateau::design::{self, Design, Word};
use plateau::measurements::{self, Measurements};
use plateau::pipeline;
use plateau::study::Study;

/// Fewest and most timed repetitions of one case.
const MIN_REPS: usize = 3;
const MAX_REPS: usize = 1000;

struct Timing {
    median: Duration,
    min: Duration,
    reps: usize,
}

/// Runs `f` once to warm up (caches, allocator, lazy statics), then repeats it until the
/// budget is spent, within [MIN_REPS, MAX_REPS].
fn time<T>(budget: Duration, mut f: impl FnMut() -> T) -> Timing {
    let warm = Instant::now();
    black_box(f());
    let once = warm.elapsed().max(Duration::from_nanos(1));
    let reps = ((budget.as_nanos() / once.as_nanos()) as usize).clamp(MIN_REPS, MAX_REPS);
    let mut samples = Vec::with_capacity(reps);
    for _ in 0..reps {
        let start = Instant::now();
        black_box(f());
        samples.push(start.elapsed());
    }
    samples.sort_unstable();
    Timing {
        median: samples[samples.len() / 2],
        min: samples[0],
        reps,
    }
}

fn show(d: Duration) -> String {
    let ns = d.as_nanos() as f64;
    if ns < 1e3 {
        format!("{ns:.0} ns")
    } else if ns < 1e6 {
        format!("{:.2} µs", ns / 1e3)
    } else if ns < 1e9 {
        format!("{:.2} ms", ns / 1e6)
    } else {
        format!("{:.3} s", ns / 1e9)
    }
}

struct Bench {
    filter: Vec<String>,
    budget: Duration,
}

impl Bench {
    fn wants(&self, name: &str) -> bool {
        self.filter.is_empty() || self.filter.iter().any(|f| name.contains(f.as_str()))
    }

    fn case<T>(&self, name: &str, runs: usize, f: impl FnMut() -> T) {
        if !self.wants(name) {
            return;
        }
        let t = time(self.budget, f);
        println!(
            "{name:<44} runs {runs:>6}   median {:>10}   min {:>10}   ({} reps)",
            show(t.median),
            show(t.min),
            t.reps
        );
    }
}

/// Invented responses: a mean of 100, two main effects, one interaction and deterministic
/// pseudo-random noise (xorshift), rounded to three decimals as a laboratory would report them.
fn invented_response(n: usize, k: usize, seed: u64) -> Vec<f64> {
    let mut state = seed | 1;
    (0..n)
        .map(|i| {
            state ^= state << 13;
            state ^= state >> 7;
            state ^= state << 17;
            let noise = (state >> 11) as f64 / (1u64 << 53) as f64 - 0.5;
            let level = |j: usize| if j < k && i >> j & 1 == 1 { 1.0 } else { -1.0 };
            let y = 100.0 + 0.8 * level(0) - 0.5 * level(1) + 0.3 * level(0) * level(1) + noise;
            (y * 1000.0).round() / 1000.0
        })
        .collect()
}

/// A study file with `k` numeric factors, one response with an effect limit and Lenth's
/// method, and a results CSV; returns the study path.
fn write_study(dir: &Path, k: usize, design_yaml: &str, runs: usize) -> PathBuf {
    let mut yaml = String::from(
        "schema: 1\nstudy:\n  id: BENCH-1\n  title: Generated study for timing\n  method: BENCH-0001 version 1\n  analyst: Bench\n  date: 2026-01-01\nfactors:\n",
    );
    for j in 0..k {
        let _ = writeln!(
            yaml,
            "  - {{ id: f{}, name: Factor {}, nominal: 10, delta: 1 }}",
            j + 1,
            j + 1
        );
    }
    let _ = write!(
        yaml,
        "design:\n{design_yaml}responses:\n  - id: content\n    name: Response\n    unit: \"%\"\n    decimals: 3\n    percent-of: mean\n\
acceptance:\n  - response: content\n    effect-limit: 2.0\n  - response: content\n    significance: {{ method: lenth, alpha: 0.05 }}\n\
results:\n  file: results.csv\n"
    );
    let mut csv = String::from("run,content\n");
    for (i, v) in invented_response(runs, k, 0x5eed + k as u64)
        .iter()
        .enumerate()
    {
        let _ = writeln!(csv, "{},{v:.3}", i + 1);
    }
    let path = dir.join("study.yaml");
    std::fs::write(&path, yaml).unwrap();
    std::fs::write(dir.join("results.csv"), csv).unwrap();
    path
}

fn load_all(path: &Path) -> (Study, Design, Measurements) {
    let study = pipeline::load(path).unwrap_or_else(|d| panic!("{path:?}: {d:?}"));
    let design = design::plan(&study).unwrap_or_else(|d| panic!("{path:?}: {d:?}"));
    let data = measurements::read(&plateau::files::Disk, &study, &design)
        .unwrap_or_else(|d| panic!("{path:?}: {d:?}"));
    (study, design, data)
}

fn main() {
    let filter: Vec<String> = std::env::args()
        .skip(1)
        .filter(|a| !a.starts_with("--"))
        .collect();
    let budget_ms = std::env::var("PLATEAU_BENCH_BUDGET_MS")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(1000);
    let bench = Bench {
        filter,
        budget: Duration::from_millis(budget_ms),
    };
    let tmp = tempfile::tempdir().unwrap();

    // (a) 2^k full factorials: the fast transform alone, the direct mean differences of the
    // main effects and two-factor interactions (what the target asks for), and the
    // whole analysis (every Effect with its label, Lenth, verdicts, run table).
    for k in 3..=16usize {
        let n = 1usize << k;
        let y = invented_response(n, k, 7 + k as u64);
        bench.case(&format!("effects/fwht-all/2^{k}"), n, || {
            effects::all_effects_fwht(black_box(&y))
        });
    }
    for k in [8usize, 12, 16] {
        let n = 1usize << k;
        let y = invented_response(n, k, 7 + k as u64);
        let coded: Vec<Vec<i8>> = (0..n)
            .map(|i| {
                (0..k)
                    .map(|j| if i >> j & 1 == 1 { 1 } else { -1 })
                    .collect()
            })
            .collect();
        let rows: Vec<&[i8]> = coded.iter().map(Vec::as_slice).collect();
        let terms: Vec<Word> = (1..(1u64 << k))
            .filter(|m| m.count_ones() <= 2)
            .map(Word)
            .collect();
        bench.case(&format!("effects/direct-order2/2^{k}"), n, || {
            terms
                .iter()
                .map(|&t| effects::effect(black_box(&rows), black_box(&y), t))
                .collect::<Vec<_>>()
        });
    }
    for k in 3..=16usize {
        let name = format!("analyse/full-factorial/2^{k}");
        if !bench.wants(&name) {
            continue;
        }
        let dir = tmp.path().join(format!("ff{k}"));
        std::fs::create_dir_all(&dir).unwrap();
        let path = write_study(&dir, k, "  kind: full-factorial\n", 1 << k);
        let (s, d, m) = load_all(&path);
        bench.case(&name, d.runs.len(), || {
            analysis::analyse(&s, &d, &m).unwrap()
        });
    }

    // (b) A 48-run Plackett–Burman: 40 factors and 7 dummy columns.
    {
        let dir = tmp.path().join("pb48");
        std::fs::create_dir_all(&dir).unwrap();
        let path = write_study(
            &dir,
            40,
            "  kind: plackett-burman\n  runs: 48\n  dummies: 7\n",
            48,
        );
        if bench.wants("analyse/plackett-burman/48") || bench.wants("evaluate/plackett-burman/48") {
            let (s, d, m) = load_all(&path);
            bench.case("analyse/plackett-burman/48", d.runs.len(), || {
                analysis::analyse(&s, &d, &m).unwrap()
            });
        }
        bench.case("evaluate/plackett-burman/48", 48, || {
            pipeline::evaluate(&path).unwrap()
        });
        bench.case("stage/load/plackett-burman/48", 48, || {
            pipeline::load(&path).unwrap()
        });
        if bench.wants("stage/plan/plackett-burman/48") {
            let s = pipeline::load(&path).unwrap();
            bench.case("stage/plan/plackett-burman/48", 48, || {
                design::plan(&s).unwrap()
            });
        }
    }

    // (c) One example from the study file to the analysis: load, plan, read, analyse.
    let example = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("examples/hplc-assay/study.yaml");
    if bench.wants("evaluate/example/hplc-assay") {
        let runs = pipeline::evaluate(&example).unwrap().design.runs.len();
        bench.case("evaluate/example/hplc-assay", runs, || {
            pipeline::evaluate(&example).unwrap()
        });
    }
    // The same stages for the largest full factorial, to show where the time goes.
    {
        let dir = tmp.path().join("ff16-evaluate");
        std::fs::create_dir_all(&dir).unwrap();
        let path = write_study(&dir, 16, "  kind: full-factorial\n", 1 << 16);
        bench.case("evaluate/full-factorial/2^16", 1 << 16, || {
            pipeline::evaluate(&path).unwrap()
        });
        bench.case("stage/load/full-factorial/2^16", 1 << 16, || {
            pipeline::load(&path).unwrap()
        });
        if bench.wants("stage/plan/full-factorial/2^16")
            || bench.wants("stage/read/full-factorial/2^16")
        {
            let s = pipeline::load(&path).unwrap();
            bench.case("stage/plan/full-factorial/2^16", 1 << 16, || {
                design::plan(&s).unwrap()
            });
            let d = design::plan(&s).unwrap();
            bench.case("stage/read/full-factorial/2^16", 1 << 16, || {
                measurements::read(&plateau::files::Disk, &s, &d).unwrap()
            });
        }
    }
    // (d) The inputs the fuzz runs found slow once (fuzz/artifacts-fixed): the study with 1,024
    // inline result rows took a minute before its fix; the smoke test replays it for panics
    // only, so its time is watched here.
    let slow = PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("fuzz/artifacts-fixed/study_loader/inline-results-1024-runs.yaml");
    bench.case("fuzz-fixed/evaluate/inline-results-1024-runs", 1024, || {
        pipeline::evaluate(&slow).is_ok()
    });
}
