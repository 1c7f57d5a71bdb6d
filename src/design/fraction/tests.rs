use super::*;
use crate::design::aliasing::chains_by_brute_force;
use crate::design::generator::*;
use crate::design::word::{letter_index, letters};

#[test]
fn letters_are_refused_when_a_single_capital_id_is_not_its_own_letter() {
    // The red-team case of issue 13: ids T, P, F, A, W; `E = ABC` once took A as the id A.
    let ids = ["T", "P", "F", "A", "W"];
    assert!(!letters_allowed(&ids));
    assert!(matches!(
        parse_generator("E = ABC", &ids),
        Err(GeneratorError::LettersAmbiguous { .. })
    ));
    assert!(matches!(
        parse_generator("W = TPF", &ids),
        Err(GeneratorError::LettersAmbiguous { .. })
    ));
    let g = parse_generator("W = T*P*F", &ids).unwrap();
    assert_eq!(g.factor, 4);
    assert!(letters_allowed(&["A", "B", "temp"]));
    assert!(letters_allowed(&["temp", "ph", "flow"]));
}
use proptest::prelude::*;

const LETTER_IDS: [&str; 15] = [
    "A", "B", "C", "D", "E", "F", "G", "H", "J", "K", "L", "M", "N", "O", "P",
];

fn fraction(k: usize, gens: &[&str]) -> Fraction {
    let ids = &LETTER_IDS[..k];
    let generators = gens
        .iter()
        .map(|g| parse_generator(g, ids).unwrap())
        .collect();
    Fraction::new(k, generators).unwrap()
}

fn w(s: &str) -> Word {
    Word::from_factors(
        &s.chars()
            .map(|c| letter_index(c).unwrap())
            .collect::<Vec<_>>(),
    )
}

fn chain_names(chain: &[SignedWord]) -> Vec<String> {
    chain.iter().map(SignedWord::label).collect()
}

#[test]
fn half_fraction_three_factors_aliases_c_with_ab() {
    // METHODS.md; Box, Hunter & Hunter (2005) ch. 6; Montgomery ch. 8: with I = ABC,
    // A = BC, B = AC, C = AB.
    let f = fraction(3, &["C = AB"]);
    assert_eq!(chain_names(&f.defining_relation), vec!["ABC"]);
    let contrasts = f.contrasts(2);
    let named: Vec<Vec<String>> = contrasts.iter().map(|c| chain_names(&c.chain)).collect();
    assert_eq!(
        named,
        vec![vec!["A", "BC"], vec!["B", "AC"], vec!["C", "AB"]]
    );
}

#[test]
fn youden_steiner_main_effects_each_carry_three_two_factor_interactions() {
    // Youden & Steiner (1975); Montgomery ch. 8 eq. 8-1: A = BD = CE = FG, etc.
    let f = youden_steiner();
    assert_eq!(f.runs(), 8);
    assert_eq!(f.resolution, Some(3));
    let contrasts = f.contrasts(2);
    assert_eq!(contrasts.len(), 7);
    for c in &contrasts {
        assert_eq!(c.term.order(), 1);
        let twofi = c.chain.iter().filter(|m| m.word.order() == 2).count();
        assert_eq!(twofi, 3, "chain of {}", letters(c.term));
    }
    assert_eq!(
        chain_names(&contrasts[0].chain),
        vec!["A", "BD", "CE", "FG"]
    );
}

#[test]
fn youden_steiner_defining_relation_matches_montgomery() {
    // Montgomery, Design and Analysis of Experiments, ch. 8 (2^(7-4)_III, D=AB, E=AC,
    // F=BC, G=ABC): 15 words, 7 of length 3, 7 of length 4, 1 of length 7.
    let f = youden_steiner();
    assert_eq!(f.defining_relation.len(), 15);
    assert_eq!(f.word_length_pattern, vec![7, 7, 0, 0, 1]);
    assert!(is_youden_steiner(&f));
}

#[test]
fn youden_steiner_matrix_is_the_published_table_up_to_run_order() {
    // Youden & Steiner (1975) table of eight combinations (from memory, see the doc of
    // youden_steiner): columns with A slowest, capital = +1.
    let published: [[i8; 7]; 8] = [
        [1, 1, 1, 1, 1, 1, 1],
        [1, 1, -1, 1, -1, -1, -1],
        [1, -1, 1, -1, 1, -1, -1],
        [1, -1, -1, -1, -1, 1, 1],
        [-1, 1, 1, -1, -1, 1, -1],
        [-1, 1, -1, -1, 1, -1, 1],
        [-1, -1, 1, 1, -1, -1, 1],
        [-1, -1, -1, 1, 1, 1, -1],
    ];
    let mut ours = youden_steiner().matrix();
    let mut theirs: Vec<Vec<i8>> = published.iter().map(|r| r.to_vec()).collect();
    ours.sort();
    theirs.sort();
    assert_eq!(ours, theirs);
}

#[test]
fn any_seven_factor_eight_run_fraction_is_youden_steiner() {
    let f = fraction(7, &["D = -AB", "E = BC", "F = AC", "G = -ABC"]);
    assert!(is_youden_steiner(&f));
    assert!(!is_youden_steiner(&fraction(
        6,
        &["D = AB", "E = AC", "F = BC"]
    )));
}

#[test]
fn half_fraction_five_factors_is_resolution_five() {
    // Box, Hunter & Hunter (2005) ch. 6; Montgomery Table XII(d): I = ABCDE, resolution V,
    // (A3, A4, A5) = (0, 0, 1).
    let f = fraction(5, &["E = ABCD"]);
    assert_eq!(f.resolution, Some(5));
    assert_eq!(f.word_length_pattern, vec![0, 0, 1]);
    assert_eq!(f.runs(), 16);
}

#[test]
fn quarter_fraction_six_factors_matches_montgomery_table_xii_f() {
    // Montgomery Appendix Table XII(f): E = ABC, F = BCD gives I = ABCE = ADEF = BCDF and
    // AE = BC = DF.
    let f = fraction(6, &["E = ABC", "F = BCD"]);
    assert_eq!(
        chain_names(&f.defining_relation),
        vec!["ABCE", "ADEF", "BCDF"]
    );
    let ae = f.alias_chain(w("AE"), 2);
    assert_eq!(chain_names(&ae), vec!["AE", "BC", "DF"]);
}

#[test]
fn negative_generator_gives_negative_words_and_signs() {
    // Montgomery ch. 8: the alternate fraction I = -ABC estimates A - BC.
    let f = fraction(3, &["C = -AB"]);
    assert_eq!(chain_names(&f.defining_relation), vec!["\u{2212}ABC"]);
    assert_eq!(
        chain_names(&f.alias_chain(w("A"), 2)),
        vec!["A", "\u{2212}BC"]
    );
    let m = f.matrix();
    for row in &m {
        assert_eq!(row[2], -row[0] * row[1]);
    }
}

#[test]
fn matrix_is_in_standard_order_of_base_factors() {
    // Box, Hunter & Hunter (2005) ch. 5 standard order; Montgomery Table 8-3 (D = ABC).
    let f = fraction(4, &["D = ABC"]);
    let m = f.matrix();
    let a: Vec<i8> = m.iter().map(|r| r[0]).collect();
    let b: Vec<i8> = m.iter().map(|r| r[1]).collect();
    let d: Vec<i8> = m.iter().map(|r| r[3]).collect();
    assert_eq!(a, vec![-1, 1, -1, 1, -1, 1, -1, 1]);
    assert_eq!(b, vec![-1, -1, 1, 1, -1, -1, 1, 1]);
    assert_eq!(d, vec![-1, 1, 1, -1, 1, -1, -1, 1]); // Montgomery Table 8-3 column D
}

#[test]
fn generated_factor_in_the_middle_keeps_file_order() {
    // Base factors are those without a generator, in file order.
    let f = fraction(4, &["B = ACD"]);
    assert_eq!(f.base, vec![0, 2, 3]);
    for row in f.matrix() {
        assert_eq!(row[1], row[0] * row[2] * row[3]);
    }
}

#[test]
fn contrasts_order_main_effects_first() {
    let f = fraction(6, &["E = ABC", "F = BCD"]);
    let c = f.contrasts(2);
    assert_eq!(c.len(), 15);
    let leads: Vec<String> = c.iter().map(|c| letters(c.term)).collect();
    assert_eq!(&leads[..6], &["A", "B", "C", "D", "E", "F"]);
    assert!(c[6..].iter().all(|c| c.term.order() >= 2));
}

#[test]
fn full_factorial_has_no_resolution() {
    let f = Fraction::new(3, vec![]).unwrap();
    assert_eq!(f.resolution, None);
    assert_eq!(f.word_length_pattern, vec![0]);
    assert_eq!(f.contrasts(3).len(), 7);
    assert_eq!(f.runs(), 8);
}

#[test]
fn fold_over_of_youden_steiner_gives_resolution_four() {
    // Montgomery ch. 8 (full fold over of the 2^(7-4)_III): the combined 16 runs separate
    // main effects from two-factor interactions; surviving words are the 7 of length 4.
    let folded = youden_steiner().fold_over().unwrap();
    assert_eq!(folded.runs.len(), 16);
    assert_eq!(folded.resolution, Some(4));
    assert_eq!(folded.word_length_pattern, vec![0, 7, 0, 0, 0]);
    let c = folded.contrasts(2);
    assert_eq!(c.len(), 15);
    for main in c.iter().filter(|c| c.term.order() == 1) {
        assert_eq!(main.chain.len(), 1);
    }
    let brute = chains_by_brute_force(&folded.runs, 2);
    assert_eq!(brute.len(), 7 + 7); // 7 main effects alone + 7 chains of three 2FIs
}

#[test]
fn saturated_sixteen_run_design_aliases_each_main_effect_with_seven_interactions() {
    // Montgomery ch. 8 (2^(15-11)_III): "each of the 15 main effects is aliased with seven
    // two-factor interactions"; Table XII(z): A = BK = CL = DM = EN = FO = GP = HJ.
    let gens = [
        "E = ABC", "F = ABD", "G = ACD", "H = BCD", "J = ABCD", "K = AB", "L = AC", "M = AD",
        "N = BC", "O = BD", "P = CD",
    ];
    let f = fraction(15, &gens);
    let c = f.contrasts(2);
    assert_eq!(c.len(), 15);
    assert!(c.iter().all(|c| c.chain.len() == 8));
    assert_eq!(
        chain_names(&c[0].chain),
        vec!["A", "BK", "CL", "DM", "EN", "FO", "GP", "HJ"]
    );
}

#[test]
fn sixteen_run_eight_factor_chain_matches_montgomery_table_xii_l() {
    // Montgomery Appendix Table XII(l): AB = CG = DH = EF.
    let f = fraction(8, &["E = BCD", "F = ACD", "G = ABC", "H = ABD"]);
    assert_eq!(
        chain_names(&f.alias_chain(w("AB"), 2)),
        vec!["AB", "CG", "DH", "EF"]
    );
}

#[test]
fn contrasts_of_fifteen_factors_in_64_runs_are_fast_and_complete() {
    // Size limit from the brief (k <= 15, N <= 64): 63 contrasts, 2^9 words per coset.
    let gens = [
        "G = ABC",
        "H = ABD",
        "J = ACE",
        "K = BDF",
        "L = CEF",
        "M = ADEF",
        "N = BCEF",
        "O = ABCDE",
        "P = ABCDEF",
    ];
    let f = fraction(15, &gens);
    assert_eq!(f.runs(), 64);
    let start = std::time::Instant::now();
    let c = f.contrasts(3);
    assert_eq!(c.len(), 63);
    assert!(start.elapsed().as_secs_f64() < 2.0);
}

#[test]
fn fold_over_of_three_factor_half_fraction_is_the_full_factorial() {
    // Box, Hunter & Hunter (2005) ch. 6: the two half fractions I = +ABC and I = -ABC
    // together are the 2^3 factorial.
    let folded = fraction(3, &["C = AB"]).fold_over().unwrap();
    assert_eq!(folded.resolution, None);
    assert!(folded.defining_relation.is_empty());
    let mut runs = folded.runs.clone();
    runs.sort();
    runs.dedup();
    assert_eq!(runs.len(), 8);
}

#[test]
fn fold_over_refuses_resolution_four_and_full_factorials() {
    let f = fraction(4, &["D = ABC"]);
    assert_eq!(
        f.fold_over(),
        Err(FoldError::NotResolutionThree { resolution: 4 })
    );
    let full = Fraction::new(3, vec![]).unwrap();
    assert_eq!(full.fold_over(), Err(FoldError::FullFactorial));
    assert!(
        FoldError::NotResolutionThree { resolution: 4 }
            .to_string()
            .contains("resolution III")
    );
}

#[test]
fn parses_letter_forms_with_both_minus_signs() {
    let ids = &LETTER_IDS[..5];
    let g = parse_generator("E = ABCD", ids).unwrap();
    assert_eq!((g.factor, g.word, g.sign), (4, w("ABCD"), 1));
    let g = parse_generator("E=-ABCD", ids).unwrap();
    assert_eq!(g.sign, -1);
    let g = parse_generator("E = \u{2212}ABCD", ids).unwrap();
    assert_eq!((g.word, g.sign), (w("ABCD"), -1));
}

#[test]
fn parses_factor_id_forms() {
    let ids = ["temp", "flow", "ph", "lot"];
    let g = parse_generator("lot = temp*flow*ph", &ids).unwrap();
    assert_eq!((g.factor, g.word, g.sign), (3, w("ABC"), 1));
    let g = parse_generator("lot = \u{2212} temp × flow × ph", &ids).unwrap();
    assert_eq!((g.factor, g.word, g.sign), (3, w("ABC"), -1));
    // letters still work with named factors
    let g = parse_generator("D = ABC", &ids).unwrap();
    assert_eq!((g.factor, g.word), (3, w("ABC")));
}

#[test]
fn single_letter_token_is_an_id_first() {
    // ids "B","A": the token A means the factor whose id is A (index 1), not letter A.
    let ids = ["B", "A", "x", "y"];
    let g = parse_generator("y = A*B*x", &ids).unwrap();
    assert_eq!(g.word, Word::from_factors(&[1, 0, 2]));
}

#[test]
fn rejects_unknown_factor_and_lists_valid_names() {
    let ids = ["temp", "flow", "ph", "lot"];
    let e = parse_generator("lot = temp*pressure", &ids).unwrap_err();
    assert!(matches!(e, GeneratorError::UnknownFactor { ref name, .. } if name == "pressure"));
    let msg = e.to_string();
    assert!(msg.contains("temp (A), flow (B), ph (C), lot (D)"), "{msg}");
    // I is not a letter
    let e = parse_generator("E = AIB", &LETTER_IDS[..5]).unwrap_err();
    assert!(matches!(e, GeneratorError::UnknownFactor { ref name, .. } if name == "I"));
}

#[test]
fn rejects_syntax_errors() {
    let ids = &LETTER_IDS[..5];
    for bad in ["E ABCD", "= ABCD", "E = ", "E = -", "E = A**B", "E = A = B"] {
        assert!(
            matches!(
                parse_generator(bad, ids),
                Err(GeneratorError::Syntax { .. })
            ),
            "{bad}"
        );
    }
}

#[test]
fn rejects_repeated_factor_on_right_side() {
    let e = parse_generator("E = ABA", &LETTER_IDS[..5]).unwrap_err();
    assert!(matches!(e, GeneratorError::RepeatedFactor { ref name, .. } if name == "A"));
}

#[test]
fn rejects_left_side_on_right_side() {
    let e = parse_generator("E = ABE", &LETTER_IDS[..5]).unwrap_err();
    assert!(matches!(e, GeneratorError::LeftOnRight { ref name, .. } if name == "E"));
}

#[test]
fn rejects_generator_copying_one_factor() {
    let g = parse_generator("E = A", &LETTER_IDS[..5]).unwrap();
    let e = Fraction::new(5, vec![g]).unwrap_err();
    assert_eq!(
        e.to_string(),
        "factors E and A would share one column; a generator needs at least two base factors"
    );
}

#[test]
fn rejects_word_using_generated_factor() {
    let ids = &LETTER_IDS[..6];
    let gens = vec![
        parse_generator("E = ABC", ids).unwrap(),
        parse_generator("F = ABE", ids).unwrap(),
    ];
    let e = Fraction::new(6, gens).unwrap_err();
    assert!(
        matches!(e, GeneratorError::UsesGeneratedFactor { ref factor, ref uses, .. }
        if factor == "F" && uses == "E")
    );
}

#[test]
fn rejects_two_generators_for_one_factor() {
    let ids = &LETTER_IDS[..5];
    let gens = vec![
        parse_generator("E = ABC", ids).unwrap(),
        parse_generator("E = ABD", ids).unwrap(),
    ];
    let e = Fraction::new(5, gens).unwrap_err();
    assert!(matches!(e, GeneratorError::DuplicateGenerator { ref factor } if factor == "E"));
}

#[test]
fn rejects_confounded_main_effects() {
    let ids = &LETTER_IDS[..5];
    let gens = vec![
        parse_generator("D = ABC", ids).unwrap(),
        parse_generator("E = ABC", ids).unwrap(),
    ];
    let e = Fraction::new(5, gens).unwrap_err();
    assert!(
        matches!(e, GeneratorError::ConfoundedMainEffects { ref a, ref b, .. }
        if a == "D" && b == "E")
    );
}

fn signed_chains_agree_with_matrix(f: &Fraction, max_order: u32) -> Result<(), TestCaseError> {
    let m = f.matrix();
    let column = |t: Word| -> Vec<i8> {
        m.iter()
            .map(|row| t.factors().iter().map(|&i| row[i]).product())
            .collect()
    };
    for c in f.contrasts(max_order) {
        let lead = column(c.term);
        for member in &c.chain {
            let col: Vec<i8> = column(member.word)
                .iter()
                .map(|v| v * member.sign)
                .collect();
            prop_assert_eq!(&col, &lead);
        }
    }
    Ok(())
}

/// Valid random fractions: p distinct base words of two or more letters always give a
/// defining relation without words of length ≤ 2 (a product of two generator words keeps a
/// non-empty base part plus two generated letters; larger products have ≥ 3 generated
/// letters).
fn random_fraction() -> impl Strategy<Value = Fraction> {
    (4usize..=9, 1usize..=4).prop_flat_map(|(k, p)| {
        let mut p = p.min(k - 2);
        while p > 0 && p > (1usize << (k - p)) - (k - p) - 1 {
            p -= 1;
        }
        let base = k - p;
        let candidates: Vec<u64> = (1u64..(1u64 << base))
            .filter(|w| w.count_ones() >= 2)
            .collect();
        (
            proptest::sample::subsequence(candidates, p).prop_shuffle(),
            proptest::collection::vec(any::<bool>(), p),
        )
            .prop_map(move |(words, negs)| {
                let generators = words
                    .into_iter()
                    .zip(negs)
                    .enumerate()
                    .map(|(j, (bits, neg))| Generator {
                        factor: base + j,
                        word: Word(bits),
                        sign: if neg { -1 } else { 1 },
                    })
                    .collect();
                Fraction::new(k, generators).unwrap()
            })
    })
}

proptest! {
    #[test]
    fn contrasts_equal_brute_force_chains(f in random_fraction(), max_order in 1u32..=3) {
        // The defining-relation chains must group terms exactly as the product columns
        // of the matrix do (checked by brute force in aliasing.rs).
        let mut ours: Vec<Vec<Word>> = f
            .contrasts(max_order)
            .into_iter()
            .map(|c| {
                let mut v: Vec<Word> = c.chain.iter().map(|m| m.word)
                    .filter(|w| w.order() <= max_order).collect();
                v.sort();
                v
            })
            .filter(|v| !v.is_empty())
            .collect();
        let mut brute: Vec<Vec<Word>> = chains_by_brute_force(&f.matrix(), max_order)
            .into_iter()
            .map(|mut v| { v.sort(); v })
            .collect();
        ours.sort();
        brute.sort();
        prop_assert_eq!(ours, brute);
        signed_chains_agree_with_matrix(&f, max_order)?;
    }
}
