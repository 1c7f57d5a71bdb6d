//! Regular two-level fractional factorial designs 2^(k−p): generators, the defining relation,
//! resolution, word-length pattern, alias chains, the coded matrix and the full fold-over.

use std::collections::HashMap;

use serde::Serialize;
use thiserror::Error;

use super::word::{
    MAX_FACTORS, SignedWord, Word, display_cmp, factor_label, letter, letter_index, terms_of_order,
};

/// One generator: column(`factor`) = `sign` × product of the columns in `word`
/// (e.g. E = ABCD, or E = −ABCD for the alternate fraction).
#[derive(Clone, Copy, PartialEq, Eq, Debug, Serialize)]
pub struct Generator {
    /// Index of the generated factor (file order).
    pub factor: usize,
    /// The base factors whose product gives the column.
    pub word: Word,
    /// +1 or −1.
    pub sign: i8,
}

impl Generator {
    /// The defining word of this generator: I = sign · (word × factor).
    pub fn defining_word(&self) -> SignedWord {
        SignedWord {
            word: self.word.times(Word::single(self.factor)),
            sign: self.sign,
        }
    }
}

/// Most generators of one fraction: the defining relation has 2^p − 1 words, all enumerated
/// (a saturated 31-factor fraction, p = 26, took minutes and gigabytes); 16 generators build in
/// well under a second.
pub const MAX_GENERATORS: usize = 16;

/// Why a generator or a set of generators cannot define a design.
#[derive(Clone, PartialEq, Eq, Debug, Error)]
pub enum GeneratorError {
    /// The text is not of the form `X = word`.
    #[error(
        "failed to read generator `{text}` ({reason}); expected e.g. `E = ABCD`, `E = -ABCD` or `lot = temp*flow*ph`"
    )]
    Syntax {
        /// The generator as written.
        text: String,
        /// What is wrong.
        reason: String,
    },
    /// A name is neither a factor id nor the letter of a factor.
    #[error(
        "unknown factor `{name}` in generator `{text}`; expected one of {valid} (letters skip I)"
    )]
    UnknownFactor {
        /// The generator as written.
        text: String,
        /// The name that was not found.
        name: String,
        /// The valid ids with their letters, e.g. "temp (A), flow (B)".
        valid: String,
    },
    /// Letters were written, but a factor id is a single capital letter other than its own
    /// letter, so letters and ids could be confused.
    #[error(
        "`{name}` in generator `{text}` is not a factor id, and letters cannot be used here: the factor ids {ids} include single capital letters that are not the factors' own letters (A = first factor, B = second, …), so a letter could be read as the wrong factor; write factor ids joined by `*`, e.g. `{example}`"
    )]
    LettersAmbiguous {
        /// The generator as written.
        text: String,
        /// The name read.
        name: String,
        /// The factor ids.
        ids: String,
        /// A generator written with ids.
        example: String,
    },
    /// A factor appears twice on the right side.
    #[error(
        "factor `{name}` appears twice on the right side of `{text}`; each factor may appear once (a repeated letter cancels)"
    )]
    RepeatedFactor {
        /// The generator as written.
        text: String,
        /// The repeated name.
        name: String,
    },
    /// The generated factor appears on its own right side.
    #[error(
        "factor `{name}` appears on both sides of `{text}`; the right side must use other (base) factors only"
    )]
    LeftOnRight {
        /// The generator as written.
        text: String,
        /// The name on both sides.
        name: String,
    },
    /// More generators than the defining relation can be enumerated for in bounded time.
    #[error(
        "{p} generators give a defining relation of 2^{p} − 1 words; plateau builds fractions with at most {max} generators (2^{max} − 1 words, well under a second)\nhint: for many factors in few runs use kind plackett-burman (up to 63 factors in 64 runs)"
    )]
    TooManyGenerators {
        /// Generators given.
        p: usize,
        /// The limit.
        max: usize,
    },
    /// More factors than a word can hold.
    #[error("a design with {k} factors is not supported; at most {max} factors")]
    TooManyFactors {
        /// Requested number of factors.
        k: usize,
        /// The limit.
        max: usize,
    },
    /// A generator refers to a factor index outside 0..k.
    #[error("generator refers to factor number {index}, but the design has {k} factors")]
    FactorOutOfRange {
        /// The offending index (0-based).
        index: usize,
        /// Number of factors.
        k: usize,
    },
    /// Two generators define the same factor.
    #[error("factor {factor} has two generators; give one generator per generated factor")]
    DuplicateGenerator {
        /// Letter (or number) of the factor.
        factor: String,
    },
    /// A generator word uses a factor that is itself generated.
    #[error(
        "the generator of {factor} uses {uses}, which is itself generated; write generator words with base factors only ({base})"
    )]
    UsesGeneratedFactor {
        /// The generated factor whose word is wrong.
        factor: String,
        /// The generated factor it uses.
        uses: String,
        /// The base factors that may be used.
        base: String,
    },
    /// A generator with a single base factor copies that column.
    #[error(
        "factors {factor} and {other} would share one column; a generator needs at least two base factors"
    )]
    SameColumn {
        /// The generated factor.
        factor: String,
        /// The base factor it would copy.
        other: String,
    },
    /// A generator with no base factor gives a constant column.
    #[error(
        "the generator of {factor} has no base factors, so the factor would never change level; a generator needs at least two base factors"
    )]
    ConstantColumn {
        /// The generated factor.
        factor: String,
    },
    /// Two main effects end up in one alias chain (a defining word of length 2).
    #[error(
        "main effects {a} and {b} would be confounded (I = {word}); give their generators different words"
    )]
    ConfoundedMainEffects {
        /// First factor.
        a: String,
        /// Second factor.
        b: String,
        /// The defining word of length two.
        word: String,
    },
    /// More generators than factors can be generated while keeping a base.
    #[error("{p} generators for {k} factors leave no base factors; use fewer generators")]
    NoBase {
        /// Number of generators.
        p: usize,
        /// Number of factors.
        k: usize,
    },
}

/// Normalises the typographic variants allowed in generator text.
fn normalise(text: &str) -> String {
    text.replace(['\u{2212}', '\u{2013}'], "-")
        .replace('×', "*")
}

fn valid_names(factor_ids: &[&str]) -> String {
    let names: Vec<String> = factor_ids
        .iter()
        .enumerate()
        .map(|(i, id)| match letter(i) {
            Some(c) if id.len() == 1 && id.starts_with(c) => id.to_string(),
            Some(c) => format!("{id} ({c})"),
            None => id.to_string(),
        })
        .collect();
    names.join(", ")
}

/// Resolves one token: as a factor id first, then (single capital letter) as a letter.
/// Whether generators may be written with letters (A = first factor, B = second, …): only
/// when no factor id is a single capital letter other than that factor's own letter. With ids
/// such as `T, P, F, A, W` the letter A (first factor) and the id A (fourth) would clash, so
/// there generators must name ids joined by `*` or `×`.
pub fn letters_allowed(factor_ids: &[&str]) -> bool {
    factor_ids.iter().enumerate().all(|(i, id)| {
        let mut chars = id.chars();
        match (chars.next(), chars.next()) {
            (Some(c), None) if c.is_ascii_uppercase() => letter_index(c) == Some(i),
            _ => true,
        }
    })
}

fn lookup(token: &str, factor_ids: &[&str], text: &str) -> Result<usize, GeneratorError> {
    if let Some(i) = factor_ids.iter().position(|id| *id == token) {
        return Ok(i);
    }
    let mut chars = token.chars();
    let single = matches!((chars.next(), chars.next()), (Some(_), None));
    if !letters_allowed(factor_ids) {
        if single || token.chars().all(|c| c.is_ascii_uppercase()) {
            return Err(ambiguous(token, factor_ids, text));
        }
    } else if single
        && let Some(c) = token.chars().next()
        && let Some(i) = letter_index(c)
        && i < factor_ids.len()
    {
        return Ok(i);
    }
    Err(GeneratorError::UnknownFactor {
        text: text.to_string(),
        name: token.to_string(),
        valid: valid_names(factor_ids),
    })
}

fn ambiguous(token: &str, factor_ids: &[&str], text: &str) -> GeneratorError {
    let example = match factor_ids {
        [a, b, .., last] => format!("{last} = {a}*{b}"),
        _ => "lot = temp*flow".to_string(),
    };
    GeneratorError::LettersAmbiguous {
        text: text.to_string(),
        name: token.to_string(),
        ids: factor_ids.join(", "),
        example,
    }
}

/// Reads one generator written with letters or with factor ids.
///
/// Accepted forms: `"E = ABCD"`, `"E=-ABCD"`, `"E = −ABCD"` (each capital letter is one
/// factor in file order, letters skip I as in the NIST/SEMATECH e-Handbook §5.3.3.4.7), and
/// `"lot = temp*flow*ph"` (ids joined by `*` or `×`, optional leading `-`/`−`). The right side
/// is read as letters when it has no `*`/`×` and consists of capital letters only; otherwise as
/// ids. Letters are accepted only when [`letters_allowed`]; otherwise a name that is not a
/// factor id, or a run of capitals that is not one id, is an error, never a guess. Spaces are
/// ignored.
pub fn parse_generator(text: &str, factor_ids: &[&str]) -> Result<Generator, GeneratorError> {
    let syntax = |reason: &str| GeneratorError::Syntax {
        text: text.to_string(),
        reason: reason.to_string(),
    };
    let norm = normalise(text);
    let mut sides = norm.split('=');
    let (lhs, rhs) = match (sides.next(), sides.next(), sides.next()) {
        (Some(l), Some(r), None) => (l.trim(), r.trim()),
        (_, None, _) => return Err(syntax("no `=`")),
        _ => return Err(syntax("more than one `=`")),
    };
    if lhs.is_empty() {
        return Err(syntax("nothing left of `=`"));
    }
    let (sign, body) = match rhs.strip_prefix('-') {
        Some(rest) => (-1i8, rest.trim()),
        None => (1i8, rhs.strip_prefix('+').unwrap_or(rhs).trim()),
    };
    if body.is_empty() {
        return Err(syntax("nothing right of `=`"));
    }
    let factor = lookup(lhs, factor_ids, text)?;

    let tokens: Vec<String> = if body.contains('*') {
        let tokens: Vec<String> = body.split('*').map(|t| t.trim().to_string()).collect();
        if tokens.iter().any(String::is_empty) {
            return Err(syntax("empty name between `*`"));
        }
        tokens
    } else {
        let compact: String = body.chars().filter(|c| !c.is_whitespace()).collect();
        let letters = letters_allowed(factor_ids);
        if factor_ids.contains(&compact.as_str()) && (!letters || compact.chars().count() == 1) {
            vec![compact]
        } else if compact.chars().all(|c| c.is_ascii_uppercase()) {
            if !letters {
                return Err(ambiguous(&compact, factor_ids, text));
            }
            compact.chars().map(String::from).collect()
        } else {
            vec![body.to_string()]
        }
    };

    let mut word = Word::IDENTITY;
    for token in &tokens {
        let i = lookup(token, factor_ids, text)?;
        if i == factor {
            return Err(GeneratorError::LeftOnRight {
                text: text.to_string(),
                name: token.clone(),
            });
        }
        if word.contains(i) {
            return Err(GeneratorError::RepeatedFactor {
                text: text.to_string(),
                name: token.clone(),
            });
        }
        word = word.times(Word::single(i));
    }
    Ok(Generator { factor, word, sign })
}

/// One estimable contrast column of a regular design and the effects it carries.
#[derive(Clone, PartialEq, Debug, Serialize)]
pub struct Contrast {
    /// The lowest-order member of the alias set (ties broken by display order); the column of
    /// the design that estimates the chain.
    pub column: Word,
    /// Members of the alias set up to the requested order, signs relative to `column`; the
    /// first entry is `column` itself with sign +1 (kept even when its order exceeds the
    /// requested order, so a chain is never empty).
    pub chain: Vec<SignedWord>,
}

/// A regular two-level fractional factorial design 2^(k−p).
#[derive(Clone, PartialEq, Debug, Serialize)]
pub struct Fraction {
    /// Number of factors.
    pub k: usize,
    /// The p generators.
    pub generators: Vec<Generator>,
    /// The k − p base factors (a full factorial in them gives the runs), in file order.
    pub base: Vec<usize>,
    /// The 2^p − 1 words equal to ±I, sorted by order then letters.
    pub defining_relation: Vec<SignedWord>,
    /// Length of the shortest defining word; `None` for a full factorial (p = 0).
    pub resolution: Option<u32>,
    /// Word-length pattern (A_3, A_4, ..., A_k): entry i counts the defining words of length
    /// i + 3 (lengths 1 and 2 cannot occur in a valid design). Empty when k < 3.
    pub word_length_pattern: Vec<usize>,
}

impl Fraction {
    /// Builds the design from its generators.
    ///
    /// The defining relation is the group generated by the generator words
    /// (generator word × generated factor), its 2^p − 1 non-identity elements with sign the
    /// product of the generator signs; resolution = length of the shortest word (Box, Hunter &
    /// Hunter 2005, ch. 6; Montgomery, Design and Analysis of Experiments, ch. 8).
    ///
    /// A generator sign below zero is read as −1, any other as +1.
    ///
    /// Errors: more than 63 factors, a generator for a factor out of range or given twice,
    /// a word using a generated factor, a word of fewer than two base factors, or a defining
    /// word of length two (two main effects in one column).
    pub fn new(k: usize, generators: Vec<Generator>) -> Result<Fraction, GeneratorError> {
        // Any negative sign means −1, anything else +1, so products stay within ±1.
        let generators: Vec<Generator> = generators
            .into_iter()
            .map(|g| Generator {
                sign: if g.sign < 0 { -1 } else { 1 },
                ..g
            })
            .collect();
        if k > MAX_FACTORS {
            return Err(GeneratorError::TooManyFactors {
                k,
                max: MAX_FACTORS,
            });
        }
        let mut generated = Word::IDENTITY;
        for g in &generators {
            if g.factor >= k {
                return Err(GeneratorError::FactorOutOfRange { index: g.factor, k });
            }
            if let Some(bad) = g.word.factors().into_iter().find(|&i| i >= k) {
                return Err(GeneratorError::FactorOutOfRange { index: bad, k });
            }
            if generated.contains(g.factor) {
                return Err(GeneratorError::DuplicateGenerator {
                    factor: factor_label(g.factor),
                });
            }
            generated = generated.times(Word::single(g.factor));
        }
        if generators.len() > MAX_GENERATORS {
            return Err(GeneratorError::TooManyGenerators {
                p: generators.len(),
                max: MAX_GENERATORS,
            });
        }
        if generators.len() >= k && k > 0 {
            return Err(GeneratorError::NoBase {
                p: generators.len(),
                k,
            });
        }
        let base: Vec<usize> = (0..k).filter(|&i| !generated.contains(i)).collect();
        let base_names = base
            .iter()
            .map(|&i| factor_label(i))
            .collect::<Vec<_>>()
            .join(", ");
        for g in &generators {
            if let Some(uses) = g
                .word
                .factors()
                .into_iter()
                .find(|&i| generated.contains(i))
            {
                return Err(GeneratorError::UsesGeneratedFactor {
                    factor: factor_label(g.factor),
                    uses: factor_label(uses),
                    base: base_names,
                });
            }
            match g.word.factors().as_slice() {
                [] => {
                    return Err(GeneratorError::ConstantColumn {
                        factor: factor_label(g.factor),
                    });
                }
                [other] => {
                    return Err(GeneratorError::SameColumn {
                        factor: factor_label(g.factor),
                        other: factor_label(*other),
                    });
                }
                _ => {}
            }
        }
        let group = group_of(&generators);
        if let Some(short) = group
            .iter()
            .find(|w| !w.word.is_identity() && w.word.order() <= 2)
        {
            let f = short.word.factors();
            return Err(GeneratorError::ConfoundedMainEffects {
                a: f.first().map_or_else(String::new, |&i| factor_label(i)),
                b: f.get(1).map_or_else(String::new, |&i| factor_label(i)),
                word: short.label(),
            });
        }
        Ok(assemble(k, generators, base, group))
    }

    /// Number of runs N = 2^(k−p).
    pub fn runs(&self) -> usize {
        1usize << self.base.len().min(usize::BITS as usize - 1)
    }

    /// The coded design matrix (N rows × k columns of ±1), factor columns in file order.
    ///
    /// Rows are in standard order of the base factors: the first base factor alternates
    /// fastest (−, +, −, +, ...), the second in pairs, and so on (Yates order, Box, Hunter &
    /// Hunter 2005, ch. 5); each generated column is sign × the product of its base columns.
    pub fn matrix(&self) -> Vec<Vec<i8>> {
        let n = self.runs();
        let mut rows = Vec::with_capacity(n);
        for r in 0..n {
            let mut row = vec![1i8; self.k];
            for (j, &b) in self.base.iter().enumerate() {
                if let Some(cell) = row.get_mut(b) {
                    *cell = if (r >> j) & 1 == 1 { 1 } else { -1 };
                }
            }
            for g in &self.generators {
                let value = g
                    .word
                    .factors()
                    .into_iter()
                    .fold(g.sign, |acc, i| acc * row.get(i).copied().unwrap_or(1));
                if let Some(cell) = row.get_mut(g.factor) {
                    *cell = value;
                }
            }
            rows.push(row);
        }
        rows
    }

    /// The alias chain of one term: the term (sign +1) followed by term × each defining word
    /// (with that word's sign), keeping those of order ≤ `max_order`; the term stays first,
    /// the others in display order (Montgomery, ch. 8: multiply the effect by every word).
    pub fn alias_chain(&self, term: Word, max_order: u32) -> Vec<SignedWord> {
        alias_chain_of(&self.defining_relation, term, max_order)
    }

    /// The N − 1 estimable contrasts with their alias chains up to `max_order`, main effects
    /// in factor order first, then by order and letters of the lead term. Cost: about
    /// N · (number of terms of order ≤ max_order) word operations, plus 2^p per contrast whose
    /// chain has no member of order ≤ max_order.
    pub fn contrasts(&self, max_order: u32) -> Vec<Contrast> {
        contrasts_of(self.k, &self.defining_relation, max_order)
    }

    /// Full fold-over: the mirror-image runs (every sign reversed) appended to the design.
    ///
    /// Reversing every column multiplies a defining word of odd length by −1 and leaves even
    /// words unchanged, so the combined 2N runs have as defining relation the even-length
    /// words of the original; a resolution III design becomes resolution IV or more, with
    /// main effects free of two-factor interactions (Box, Hunter & Hunter 2005, ch. 6;
    /// Montgomery, ch. 8, "full fold over").
    ///
    /// Errors for a full factorial and for resolution IV or higher, where a full fold-over
    /// does not separate main effects from two-factor interactions (they already are).
    pub fn fold_over(&self) -> Result<FoldedFraction, FoldError> {
        match self.resolution {
            None => Err(FoldError::FullFactorial),
            Some(r) if r >= 4 => Err(FoldError::NotResolutionThree { resolution: r }),
            Some(_) => {
                let original = self.matrix();
                let mirror: Vec<Vec<i8>> = original
                    .iter()
                    .map(|row| row.iter().map(|v| -v).collect())
                    .collect();
                let mut runs = original;
                runs.extend(mirror);
                let defining_relation: Vec<SignedWord> = self
                    .defining_relation
                    .iter()
                    .filter(|w| w.word.order() % 2 == 0)
                    .copied()
                    .collect();
                Ok(FoldedFraction {
                    k: self.k,
                    runs,
                    resolution: resolution_of(&defining_relation),
                    word_length_pattern: word_length_pattern_of(self.k, &defining_relation),
                    defining_relation,
                })
            }
        }
    }
}

/// Why a full fold-over was refused.
#[derive(Clone, PartialEq, Eq, Debug, Error)]
pub enum FoldError {
    /// No generators: nothing is aliased.
    #[error("a full factorial has no aliases to break; fold-over is for resolution III fractions")]
    FullFactorial,
    /// The design already separates main effects from two-factor interactions.
    #[error(
        "the design has resolution {resolution}; a full fold-over is for resolution III fractions (main effects are already free of two-factor interactions)"
    )]
    NotResolutionThree {
        /// The design's resolution.
        resolution: u32,
    },
}

/// A resolution III fraction combined with its mirror image (full fold-over), 2N runs.
#[derive(Clone, PartialEq, Debug, Serialize)]
pub struct FoldedFraction {
    /// Number of factors.
    pub k: usize,
    /// 2N rows × k: the original runs in standard order, then their mirror images.
    pub runs: Vec<Vec<i8>>,
    /// The even-length words of the original defining relation (with their signs).
    pub defining_relation: Vec<SignedWord>,
    /// Length of the shortest surviving word; `None` when none survives (a full factorial).
    pub resolution: Option<u32>,
    /// (A_3, ..., A_k) of the combined design, same index convention as [`Fraction`].
    pub word_length_pattern: Vec<usize>,
}

impl FoldedFraction {
    /// Number of runs of the combined design (2N).
    pub fn run_count(&self) -> usize {
        self.runs.len()
    }

    /// Contrasts of the combined design, computed by the same code as [`Fraction::contrasts`].
    pub fn contrasts(&self, max_order: u32) -> Vec<Contrast> {
        contrasts_of(self.k, &self.defining_relation, max_order)
    }

    /// Alias chain of one term in the combined design, as [`Fraction::alias_chain`].
    pub fn alias_chain(&self, term: Word, max_order: u32) -> Vec<SignedWord> {
        alias_chain_of(&self.defining_relation, term, max_order)
    }
}

/// Builds a fraction from already validated parts.
fn assemble(
    k: usize,
    generators: Vec<Generator>,
    base: Vec<usize>,
    group: Vec<SignedWord>,
) -> Fraction {
    let mut defining_relation: Vec<SignedWord> = group
        .into_iter()
        .filter(|w| !w.word.is_identity())
        .collect();
    defining_relation.sort_by(|a, b| display_cmp(&a.word, &b.word));
    Fraction {
        k,
        resolution: resolution_of(&defining_relation),
        word_length_pattern: word_length_pattern_of(k, &defining_relation),
        generators,
        base,
        defining_relation,
    }
}

/// All 2^p products of the generator words, identity included.
fn group_of(generators: &[Generator]) -> Vec<SignedWord> {
    let mut group = vec![SignedWord::plus(Word::IDENTITY)];
    for g in generators {
        let dw = g.defining_word();
        let more: Vec<SignedWord> = group.iter().map(|w| w.times(dw)).collect();
        group.extend(more);
    }
    group
}

fn resolution_of(defining: &[SignedWord]) -> Option<u32> {
    defining.iter().map(|w| w.word.order()).min()
}

fn word_length_pattern_of(k: usize, defining: &[SignedWord]) -> Vec<usize> {
    let mut pattern = vec![0usize; k.saturating_sub(2)];
    for w in defining {
        let len = w.word.order() as usize;
        if let Some(slot) = len.checked_sub(3).and_then(|i| pattern.get_mut(i)) {
            *slot += 1;
        }
    }
    pattern
}

fn alias_chain_of(defining: &[SignedWord], term: Word, max_order: u32) -> Vec<SignedWord> {
    let mut others: Vec<SignedWord> = defining
        .iter()
        .map(|d| SignedWord {
            word: term.times(d.word),
            sign: d.sign,
        })
        .filter(|w| w.word.order() <= max_order && w.word != term)
        .collect();
    others.sort_by(|a, b| display_cmp(&a.word, &b.word));
    let mut chain = vec![SignedWord::plus(term)];
    chain.extend(others);
    chain
}

/// Row-reduced basis of the defining group: each row has a pivot bit that no other row has,
/// so `reduce` maps every word to one canonical member of its coset (zero on the pivots).
struct Reducer {
    rows: Vec<(u64, u64)>, // (pivot bit, row)
}

impl Reducer {
    fn new(words: impl IntoIterator<Item = Word>) -> Reducer {
        let mut rows: Vec<(u64, u64)> = Vec::new();
        for w in words {
            let mut v = w.0;
            for &(pivot, row) in &rows {
                if v & pivot != 0 {
                    v ^= row;
                }
            }
            if v == 0 {
                continue;
            }
            let pivot = v & v.wrapping_neg();
            for entry in rows.iter_mut() {
                if entry.1 & pivot != 0 {
                    entry.1 ^= v;
                }
            }
            rows.push((pivot, v));
        }
        Reducer { rows }
    }

    fn pivots(&self) -> u64 {
        self.rows.iter().fold(0, |acc, &(p, _)| acc | p)
    }

    fn reduce(&self, w: Word) -> Word {
        let mut v = w.0;
        for &(pivot, row) in &self.rows {
            if v & pivot != 0 {
                v ^= row;
            }
        }
        Word(v)
    }
}

/// Contrasts of a regular design given by its defining relation (identity excluded).
///
/// The columns of the design are the cosets of the defining group in the group of all words;
/// two terms share a column (up to sign) exactly when their product is a defining word
/// (Box, Hunter & Hunter 2005, ch. 6). Each coset's sign relative to its lead term t is the
/// sign of the defining word w × t.
fn contrasts_of(k: usize, defining: &[SignedWord], max_order: u32) -> Vec<Contrast> {
    let k = k.min(MAX_FACTORS);
    let signs: HashMap<Word, i8> = defining
        .iter()
        .map(|w| (w.word, w.sign))
        .chain(std::iter::once((Word::IDENTITY, 1)))
        .collect();
    let reducer = Reducer::new(defining.iter().map(|w| w.word));
    let max_order = max_order.min(k as u32);

    // Group every term up to max_order under its coset's canonical word.
    let mut members: HashMap<Word, Vec<Word>> = HashMap::new();
    for order in 1..=max_order {
        for term in terms_of_order(k, order) {
            let rep = reducer.reduce(term);
            if rep.is_identity() {
                continue; // aliased with the mean: not a contrast
            }
            members.entry(rep).or_default().push(term);
        }
    }

    // Canonical words are exactly the words over the non-pivot factors.
    let free: Vec<usize> = (0..k)
        .filter(|&i| reducer.pivots() & (1u64 << i) == 0)
        .collect();
    let cosets = 1u64.checked_shl(free.len() as u32).unwrap_or(0);
    let mut out = Vec::new();
    for mask in 1..cosets {
        let rep = Word(
            free.iter()
                .enumerate()
                .filter(|(j, _)| (mask >> j) & 1 == 1)
                .fold(0u64, |acc, (_, &i)| acc | (1u64 << i)),
        );
        let mut low = members.remove(&rep).unwrap_or_default();
        low.sort_by(display_cmp);
        let lead = match low.first() {
            Some(&w) => w,
            None => {
                // No member of low order: search the whole coset for its lowest term.
                defining
                    .iter()
                    .map(|d| rep.times(d.word))
                    .chain(std::iter::once(rep))
                    .min_by(display_cmp)
                    .unwrap_or(rep)
            }
        };
        let mut chain = vec![SignedWord::plus(lead)];
        chain.extend(low.into_iter().filter(|&w| w != lead).map(|w| SignedWord {
            word: w,
            sign: signs.get(&w.times(lead)).copied().unwrap_or(1),
        }));
        out.push(Contrast {
            column: lead,
            chain,
        });
    }
    out.sort_by(|a, b| display_cmp(&a.column, &b.column));
    out
}

/// The Youden–Steiner ruggedness design: 7 factors in 8 runs, the 2^(7−4) resolution III
/// fraction with D = AB, E = AC, F = BC, G = ABC, all signs +.
///
/// Youden & Steiner, Statistical Manual of the AOAC (1975), print the design as eight
/// combinations of capital and lower-case letters (capital = nominal/first level). The table
/// as remembered here — not confirmed against the manual (from memory) — has, with capital
/// = +1 and A changing slowest, columns A = ++++−−−−, B = ++−−++−−, C = +−+−+−+−,
/// D = ++−−−−++, E = +−+−−+−+, F = +−−++−−+, G = +−−+−++−, i.e. exactly D = AB, E = AC,
/// F = BC, G = ABC in another run order. Montgomery (ch. 8, Table 8-19) prints the same
/// generators for the 2^(7−4)_III. Each main effect is aliased with three two-factor
/// interactions.
pub fn youden_steiner() -> Fraction {
    let g = |factor: usize, base: &[usize]| Generator {
        factor,
        word: Word::from_factors(base),
        sign: 1,
    };
    let generators = vec![
        g(3, &[0, 1]),
        g(4, &[0, 2]),
        g(5, &[1, 2]),
        g(6, &[0, 1, 2]),
    ];
    let group = group_of(&generators);
    assemble(7, generators, vec![0, 1, 2], group)
}

/// Whether a fraction is (equivalent to) the Youden–Steiner design: any 2^(7−4).
///
/// Reasoning: in 8 runs the columns are the 7 non-identity elements of a group of order 8
/// (the words over three base factors). A valid fraction (resolution ≥ III, which
/// `Fraction::new` enforces) gives its 7 factors 7 distinct non-identity columns up to sign,
/// so it uses every one of them: every 2^(7−4) is the saturated 8-run design, the same as
/// Youden–Steiner's up to relabelling the factors and reversing signs.
pub fn is_youden_steiner(fraction: &Fraction) -> bool {
    fraction.k == 7 && fraction.generators.len() == 4
}

#[cfg(test)]
mod tests {
    use super::super::aliasing::chains_by_brute_force;
    use super::super::word::letters;
    use super::*;

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
            assert_eq!(c.column.order(), 1);
            let twofi = c.chain.iter().filter(|m| m.word.order() == 2).count();
            assert_eq!(twofi, 3, "chain of {}", letters(c.column));
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
        let leads: Vec<String> = c.iter().map(|c| letters(c.column)).collect();
        assert_eq!(&leads[..6], &["A", "B", "C", "D", "E", "F"]);
        assert!(c[6..].iter().all(|c| c.column.order() >= 2));
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
        assert_eq!(folded.run_count(), 16);
        assert_eq!(folded.resolution, Some(4));
        assert_eq!(folded.word_length_pattern, vec![0, 7, 0, 0, 0]);
        let c = folded.contrasts(2);
        assert_eq!(c.len(), 15);
        for main in c.iter().filter(|c| c.column.order() == 1) {
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
            let lead = column(c.column);
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
}
