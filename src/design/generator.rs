//! The generators of a regular fraction as the study file writes them (`E = ABCD`,
//! `lot = temp*flow*ph`): reading them against the factor ids or letters, and why a set of
//! generators cannot define a design.

use serde::Serialize;
use thiserror::Error;

use super::word::{SignedWord, Word, letter, letter_index};

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
