//! The catalogue of recommended regular fractions 2^(k−p) for 3 to 15 factors in 4 to 64
//! runs, so a study can ask for "resolution IV" or "16 runs" instead of writing generators.
//!
//! Source (one table): D. C. Montgomery, Design and Analysis of Experiments, Table 8-14
//! "Selected 2^(k−p) fractional factorial designs" (5th ed., Wiley 2001; Table 8.14 in later
//! editions), with the alias relations of its Appendix Table XII. The entries were taken from
//! a transcription of that table (a study summary of the chapter), not from the printed page;
//! they agree with the generators the NIST/SEMATECH e-Handbook §5.3.3.4.7 prints as far as
//! remembered (from memory), except 2^(11−6), where the e-Handbook is remembered to write
//! K = AEF, L = ADEF (generated factors in the words) — Montgomery's K = ADE, L = BDE is used.
//! Montgomery presents them as recommended designs; whether each is also minimum aberration
//! in the sense of Fries & Hunter, Technometrics 22 (1980) 601–608, was not checked here
//! against their tables (believed so, from memory, for the designs up to 32 runs).
//!
//! Word-length patterns (A_3, ..., A_k): counted from the defining relations listed for each
//! design in Montgomery's Appendix Table XII (via the same transcription). The 64-run
//! 2^(11−5) is not in that appendix, so its pattern is left empty.

use serde::Serialize;
use thiserror::Error;

/// One catalogue design, as printed in the source table.
#[derive(Clone, Copy, PartialEq, Eq, Debug, Serialize)]
pub struct CatalogueEntry {
    /// Number of factors k.
    pub factors: usize,
    /// Number of runs N = 2^(k−p).
    pub runs: usize,
    /// The p generators in letter form (letters skip I), all with sign +.
    pub generators: &'static [&'static str],
    /// Resolution as printed (Roman subscript of the design).
    pub resolution: u32,
    /// (A_3, ..., A_k), entry i counting defining words of length i + 3; empty when no
    /// published source for it was available (see module doc).
    pub word_length_pattern: &'static [usize],
}

const fn e(
    factors: usize,
    runs: usize,
    generators: &'static [&'static str],
    resolution: u32,
    word_length_pattern: &'static [usize],
) -> CatalogueEntry {
    CatalogueEntry {
        factors,
        runs,
        generators,
        resolution,
        word_length_pattern,
    }
}

const G16: [&str; 11] = [
    "E = ABC", "F = ABD", "G = ACD", "H = BCD", "J = ABCD", "K = AB", "L = AC", "M = AD", "N = BC",
    "O = BD", "P = CD",
];

/// Montgomery Table 8-14, runs ≤ 64, ordered by factors then runs. WLPs from Appendix XII.
static ENTRIES: [CatalogueEntry; 27] = [
    e(3, 4, &["C = AB"], 3, &[1]),
    e(4, 8, &["D = ABC"], 4, &[0, 1]),
    e(5, 8, &["D = AB", "E = AC"], 3, &[2, 1, 0]),
    e(5, 16, &["E = ABCD"], 5, &[0, 0, 1]),
    e(6, 8, &["D = AB", "E = AC", "F = BC"], 3, &[4, 3, 0, 0]),
    e(6, 16, &["E = ABC", "F = BCD"], 4, &[0, 3, 0, 0]),
    e(6, 32, &["F = ABCDE"], 6, &[0, 0, 0, 1]),
    e(
        7,
        8,
        &["D = AB", "E = AC", "F = BC", "G = ABC"],
        3,
        &[7, 7, 0, 0, 1],
    ),
    e(
        7,
        16,
        &["E = ABC", "F = BCD", "G = ACD"],
        4,
        &[0, 7, 0, 0, 0],
    ),
    e(7, 32, &["F = ABCD", "G = ABDE"], 4, &[0, 1, 2, 0, 0]),
    e(7, 64, &["G = ABCDEF"], 7, &[0, 0, 0, 0, 1]),
    e(
        8,
        16,
        &["E = BCD", "F = ACD", "G = ABC", "H = ABD"],
        4,
        &[0, 14, 0, 0, 0, 1],
    ),
    e(
        8,
        32,
        &["F = ABC", "G = ABD", "H = BCDE"],
        4,
        &[0, 3, 4, 0, 0, 0],
    ),
    e(8, 64, &["G = ABCD", "H = ABEF"], 5, &[0, 0, 2, 1, 0, 0]),
    e(
        9,
        16,
        &["E = ABC", "F = BCD", "G = ACD", "H = ABD", "J = ABCD"],
        3,
        &[4, 14, 8, 0, 4, 1, 0],
    ),
    e(
        9,
        32,
        &["F = BCDE", "G = ACDE", "H = ABDE", "J = ABCE"],
        4,
        &[0, 6, 8, 0, 0, 1, 0],
    ),
    e(
        9,
        64,
        &["G = ABCD", "H = ACEF", "J = CDEF"],
        4,
        &[0, 1, 4, 2, 0, 0, 0],
    ),
    e(
        10,
        16,
        &[
            "E = ABC", "F = BCD", "G = ACD", "H = ABD", "J = ABCD", "K = AB",
        ],
        3,
        &[8, 18, 16, 8, 8, 5, 0, 0],
    ),
    e(
        10,
        32,
        &["F = ABCD", "G = ABCE", "H = ABDE", "J = ACDE", "K = BCDE"],
        4,
        &[0, 10, 16, 0, 0, 5, 0, 0],
    ),
    e(
        10,
        64,
        &["G = BCDF", "H = ACDF", "J = ABDE", "K = ABCE"],
        4,
        &[0, 2, 8, 4, 0, 1, 0, 0],
    ),
    e(
        11,
        16,
        &[
            "E = ABC", "F = BCD", "G = ACD", "H = ABD", "J = ABCD", "K = AB", "L = AC",
        ],
        3,
        &[12, 26, 28, 24, 20, 13, 4, 0, 0],
    ),
    e(
        11,
        32,
        &[
            "F = ABC", "G = BCD", "H = CDE", "J = ACD", "K = ADE", "L = BDE",
        ],
        4,
        &[0, 25, 0, 27, 0, 10, 0, 1, 0],
    ),
    e(
        11,
        64,
        &["G = CDE", "H = ABCD", "J = ABF", "K = BDEF", "L = ADEF"],
        4,
        &[],
    ),
    e(
        12,
        16,
        G16.split_at(8).0,
        3,
        &[16, 39, 48, 48, 48, 39, 16, 0, 0, 1],
    ),
    e(
        13,
        16,
        G16.split_at(9).0,
        3,
        &[22, 55, 72, 96, 116, 87, 40, 16, 6, 1, 0],
    ),
    e(
        14,
        16,
        G16.split_at(10).0,
        3,
        &[28, 77, 112, 168, 232, 203, 112, 56, 28, 7, 0, 0],
    ),
    e(
        15,
        16,
        &G16,
        3,
        &[35, 105, 168, 280, 435, 435, 280, 168, 105, 35, 0, 0, 1],
    ),
];

/// All catalogue entries, ordered by number of factors, then runs.
pub fn entries() -> &'static [CatalogueEntry] {
    &ENTRIES
}

/// Why no catalogue design was chosen.
#[derive(Clone, PartialEq, Eq, Debug, Error)]
pub enum CatalogueError {
    /// The catalogue has no designs for this many factors.
    #[error(
        "the catalogue has fractional designs for 3 to 15 factors, not {k}; give generators, or use kind plackett-burman for more factors"
    )]
    UnsupportedFactors {
        /// Requested number of factors.
        k: usize,
    },
    /// The requested runs make a full factorial (or more).
    #[error(
        "{runs} runs for {k} factors is the full factorial 2^{k} = {full}, not a fraction; use kind full-factorial"
    )]
    FullFactorial {
        /// Factors.
        k: usize,
        /// Requested runs.
        runs: usize,
        /// 2^k.
        full: usize,
    },
    /// No catalogue design with that many runs.
    #[error("no catalogue design for {k} factors in {runs} runs; expected one of: {options}")]
    NoEntry {
        /// Factors.
        k: usize,
        /// Requested runs.
        runs: usize,
        /// The available designs.
        options: String,
    },
    /// The requested resolution is not reached.
    #[error(
        "no catalogue design for {k} factors reaches resolution {wanted}{within}; available: {options}; a full factorial ({full} runs) has no aliasing: use kind full-factorial"
    )]
    ResolutionNotAchievable {
        /// Factors.
        k: usize,
        /// Requested resolution (Roman).
        wanted: String,
        /// " in N runs" when runs were given, else empty.
        within: String,
        /// The available designs.
        options: String,
        /// 2^k, for the full-factorial hint (saturating).
        full: usize,
    },
    /// Neither resolution nor runs given.
    #[error(
        "give a resolution or a number of runs to choose a design for {k} factors; available: {options}"
    )]
    Unspecified {
        /// Factors.
        k: usize,
        /// The available designs.
        options: String,
    },
}

/// Roman numeral of a resolution (III, IV, ...), as designs are labelled in the tables.
pub fn roman(r: u32) -> String {
    match r {
        1 => "I",
        2 => "II",
        3 => "III",
        4 => "IV",
        5 => "V",
        6 => "VI",
        7 => "VII",
        8 => "VIII",
        9 => "IX",
        10 => "X",
        _ => return r.to_string(),
    }
    .to_string()
}

fn options_for(k: usize) -> String {
    ENTRIES
        .iter()
        .filter(|e| e.factors == k)
        .map(|e| format!("{} runs (resolution {})", e.runs, roman(e.resolution)))
        .collect::<Vec<_>>()
        .join(", ")
}

/// Chooses a catalogue design for `k` factors.
///
/// With `runs` only: the entry for (k, runs). With `resolution` only: the smallest run count
/// whose entry has resolution ≥ the requested one. With both: that entry, if its resolution is
/// at least the requested one. A run count equal to (or above) the full factorial 2^k is
/// refused with a hint to use kind full-factorial.
pub fn choose(
    k: usize,
    resolution: Option<u32>,
    runs: Option<usize>,
) -> Result<&'static CatalogueEntry, CatalogueError> {
    if !(3..=15).contains(&k) {
        return Err(CatalogueError::UnsupportedFactors { k });
    }
    let full = 1usize << k;
    let options = options_for(k);
    let not_reached = |wanted: u32, within: String| CatalogueError::ResolutionNotAchievable {
        k,
        wanted: roman(wanted),
        within,
        options: options.clone(),
        full,
    };
    match (resolution, runs) {
        (_, Some(n)) if n >= full => Err(CatalogueError::FullFactorial { k, runs: n, full }),
        (wanted, Some(n)) => {
            let entry = ENTRIES
                .iter()
                .find(|e| e.factors == k && e.runs == n)
                .ok_or_else(|| CatalogueError::NoEntry {
                    k,
                    runs: n,
                    options: options.clone(),
                })?;
            match wanted {
                Some(r) if entry.resolution < r => Err(not_reached(r, format!(" in {n} runs"))),
                _ => Ok(entry),
            }
        }
        (Some(r), None) => ENTRIES
            .iter()
            .filter(|e| e.factors == k && e.resolution >= r)
            .min_by_key(|e| e.runs)
            .ok_or_else(|| not_reached(r, String::new())),
        (None, None) => Err(CatalogueError::Unspecified { k, options }),
    }
}

#[cfg(test)]
mod tests {
    use super::super::fraction::Fraction;
    use super::super::generator::parse_generator;
    use super::*;

    const IDS: [&str; 15] = [
        "A", "B", "C", "D", "E", "F", "G", "H", "J", "K", "L", "M", "N", "O", "P",
    ];

    fn build(entry: &CatalogueEntry) -> Fraction {
        let ids = &IDS[..entry.factors];
        let gens = entry
            .generators
            .iter()
            .map(|g| parse_generator(g, ids).unwrap())
            .collect();
        Fraction::new(entry.factors, gens).unwrap()
    }

    #[test]
    fn every_entry_has_the_printed_resolution_and_word_length_pattern() {
        // Montgomery, Design and Analysis of Experiments, Table 8-14 (resolution) and
        // Appendix Table XII (defining relations, counted into the WLP).
        for entry in entries() {
            let f = build(entry);
            assert_eq!(f.runs(), entry.runs, "{entry:?}");
            assert_eq!(f.resolution, Some(entry.resolution), "{entry:?}");
            if !entry.word_length_pattern.is_empty() {
                assert_eq!(
                    f.word_length_pattern, entry.word_length_pattern,
                    "{entry:?}"
                );
            }
        }
    }

    #[test]
    fn entries_are_unique_per_factors_and_runs() {
        for (i, a) in entries().iter().enumerate() {
            for b in &entries()[i + 1..] {
                assert!((a.factors, a.runs) != (b.factors, b.runs));
            }
        }
    }

    #[test]
    fn runs_only_gives_that_entry() {
        let e = choose(7, None, Some(16)).unwrap();
        assert_eq!(e.generators, &["E = ABC", "F = BCD", "G = ACD"]);
    }

    #[test]
    fn resolution_only_gives_the_smallest_design() {
        assert_eq!(choose(7, Some(4), None).unwrap().runs, 16);
        assert_eq!(choose(7, Some(3), None).unwrap().runs, 8);
        assert_eq!(choose(8, Some(5), None).unwrap().runs, 64);
        assert_eq!(choose(5, Some(5), None).unwrap().runs, 16);
    }

    #[test]
    fn both_given_checks_the_resolution() {
        assert_eq!(choose(6, Some(4), Some(16)).unwrap().runs, 16);
        let e = choose(6, Some(4), Some(8)).unwrap_err();
        let msg = e.to_string();
        assert!(msg.contains("resolution IV in 8 runs"), "{msg}");
        assert!(msg.contains("16 runs (resolution IV)"), "{msg}");
    }

    #[test]
    fn unreachable_resolution_suggests_full_factorial() {
        let msg = choose(4, Some(5), None).unwrap_err().to_string();
        assert!(msg.contains("full-factorial"), "{msg}");
        assert!(msg.contains("16 runs"), "{msg}");
    }

    #[test]
    fn full_factorial_run_count_is_refused() {
        assert_eq!(
            choose(4, None, Some(16)),
            Err(CatalogueError::FullFactorial {
                k: 4,
                runs: 16,
                full: 16
            })
        );
        assert!(
            choose(4, None, Some(16))
                .unwrap_err()
                .to_string()
                .contains("use kind full-factorial")
        );
    }

    #[test]
    fn unknown_run_count_lists_options() {
        let msg = choose(9, None, Some(12)).unwrap_err().to_string();
        assert!(
            msg.contains(
                "16 runs (resolution III), 32 runs (resolution IV), 64 runs (resolution IV)"
            ),
            "{msg}"
        );
    }

    #[test]
    fn factor_count_outside_catalogue_is_refused() {
        assert!(matches!(
            choose(2, Some(3), None),
            Err(CatalogueError::UnsupportedFactors { k: 2 })
        ));
        assert!(matches!(
            choose(16, Some(3), None),
            Err(CatalogueError::UnsupportedFactors { k: 16 })
        ));
    }

    #[test]
    fn neither_given_is_an_error_listing_options() {
        assert!(matches!(
            choose(5, None, None),
            Err(CatalogueError::Unspecified { .. })
        ));
    }
}
