//! Words: products of factor columns of a two-level design, the letters that name them, and
//! the display order of effect terms (A < B < AB < AC < BC < ABC).

use std::cmp::Ordering;

use serde::Serialize;

/// Largest number of factors a [`Word`] can hold (bits 0..=62).
pub const MAX_FACTORS: usize = 63;

/// The 25 factor letters: A–Z without I, because I denotes the identity (the column of
/// plus signs) in a defining relation. This is the convention of the NIST/SEMATECH
/// e-Handbook of Statistical Methods §5.3.3.4.7 tables and of Box, Hunter & Hunter,
/// Statistics for Experimenters (2nd ed., 2005), ch. 6.
const LETTERS: [char; 25] = [
    'A', 'B', 'C', 'D', 'E', 'F', 'G', 'H', 'J', 'K', 'L', 'M', 'N', 'O', 'P', 'Q', 'R', 'S', 'T',
    'U', 'V', 'W', 'X', 'Y', 'Z',
];

/// A product of factor columns, stored as a bit set over factor indices (bit i = factor i):
/// an effect term (main effect or interaction) or a word of a defining relation.
///
/// Multiplying two words is the exclusive or of their bits: a letter that appears twice
/// cancels, because the elementwise square of a ±1 column is the identity column I
/// (Box, Hunter & Hunter 2005, ch. 6). The empty word is the identity I.
#[derive(Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Debug, Serialize)]
pub struct Word(pub u64);

impl Word {
    /// The identity I (the empty product, the column of plus signs).
    pub const IDENTITY: Word = Word(0);

    /// The main effect of factor `i`; indices beyond [`MAX_FACTORS`] − 1 give the identity
    /// (callers keep factor counts within the limit, see `Fraction::new`).
    pub fn single(i: usize) -> Word {
        if i < MAX_FACTORS {
            Word(1u64 << i)
        } else {
            Word::IDENTITY
        }
    }

    /// The word made of the given factors; a factor listed twice cancels (product rule).
    pub fn from_factors(factors: &[usize]) -> Word {
        factors
            .iter()
            .fold(Word::IDENTITY, |w, &i| w.times(Word::single(i)))
    }

    /// Order of the term: the number of letters (1 = main effect, 2 = two-factor interaction).
    pub fn order(self) -> u32 {
        self.0.count_ones()
    }

    /// Product of two words: letters appearing in both cancel (xor of the bit sets).
    pub fn times(self, other: Word) -> Word {
        Word(self.0 ^ other.0)
    }

    /// The factor indices in the word, ascending.
    pub fn factors(self) -> Vec<usize> {
        let mut out = Vec::with_capacity(self.order() as usize);
        let mut bits = self.0;
        while bits != 0 {
            out.push(bits.trailing_zeros() as usize);
            bits &= bits - 1;
        }
        out
    }

    /// Whether factor `i` is one of the letters of the word.
    pub fn contains(self, i: usize) -> bool {
        i < MAX_FACTORS && self.0 & (1u64 << i) != 0
    }

    /// Whether this is the identity I (no letters).
    pub fn is_identity(self) -> bool {
        self.0 == 0
    }
}

/// Display order of terms: by order first, then by the ascending factor indices compared
/// lexicographically, so A < B < AB < AC < BC < ABC (the order in which effect tables list
/// terms, Box, Hunter & Hunter 2005, ch. 5–6).
pub fn display_cmp(a: &Word, b: &Word) -> Ordering {
    a.order().cmp(&b.order()).then_with(|| {
        // Same number of letters: the word whose first differing letter comes earlier sorts
        // first. The lowest differing bit tells which word holds that letter.
        let diff = a.0 ^ b.0;
        if diff == 0 {
            Ordering::Equal
        } else if a.0 & (diff & diff.wrapping_neg()) != 0 {
            Ordering::Less
        } else {
            Ordering::Greater
        }
    })
}

/// A word with a sign: `sign · product of the columns in word` (sign is +1 or −1). In a
/// defining relation, I = −ABD means the column ABD is all minus signs.
#[derive(Clone, Copy, PartialEq, Eq, Hash, Debug, Serialize)]
pub struct SignedWord {
    /// The product of factor columns.
    pub word: Word,
    /// +1 or −1.
    pub sign: i8,
}

impl SignedWord {
    /// The word with sign +1.
    pub fn plus(word: Word) -> SignedWord {
        SignedWord { word, sign: 1 }
    }

    /// The product of two signed words (signs multiply, letters cancel in pairs).
    pub fn times(self, other: SignedWord) -> SignedWord {
        SignedWord {
            word: self.word.times(other.word),
            sign: self.sign * other.sign,
        }
    }

    /// Letters with a leading "−" (U+2212) when the sign is negative, e.g. "−ABD".
    pub fn label(&self) -> String {
        let body = letters(self.word);
        if self.sign < 0 {
            format!("\u{2212}{body}")
        } else {
            body
        }
    }
}

/// The letter of factor `i`: A, B, ..., H, J, K, ..., Z (I is skipped, it denotes the
/// identity); `None` beyond the 25th factor.
pub fn letter(i: usize) -> Option<char> {
    LETTERS.get(i).copied()
}

/// The factor index of a letter (inverse of [`letter`]); `None` for I, lowercase or other
/// characters.
pub fn letter_index(c: char) -> Option<usize> {
    LETTERS.iter().position(|&l| l == c)
}

/// The letters of a word, e.g. "ABD"; "I" for the identity. Factors beyond the 25 letters
/// are written as their 1-based number in braces, e.g. "{26}", so a name is never lost.
pub fn letters(word: Word) -> String {
    if word.is_identity() {
        return "I".to_string();
    }
    word.factors()
        .into_iter()
        .map(factor_label)
        .collect::<Vec<_>>()
        .concat()
}

/// The letter of factor `i` as a string, or "{i+1}" beyond the 25 letters.
pub fn factor_label(i: usize) -> String {
    match letter(i) {
        Some(c) => c.to_string(),
        None => format!("{{{}}}", i + 1),
    }
}

/// Every word of exactly `order` letters over factors 0..k (Gosper's hack), in ascending
/// bit order.
pub fn terms_of_order(k: usize, order: u32) -> Vec<Word> {
    let order = order as usize;
    if order == 0 || order > k || k > MAX_FACTORS {
        return Vec::new();
    }
    let limit = 1u64 << k;
    let mut out = Vec::new();
    let mut v: u64 = (1u64 << order) - 1;
    while v < limit {
        out.push(Word(v));
        let c = v & v.wrapping_neg();
        let r = v + c;
        v = (((r ^ v) >> 2) / c) | r;
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    fn w(s: &str) -> Word {
        Word::from_factors(
            &s.chars()
                .map(|c| letter_index(c).unwrap())
                .collect::<Vec<_>>(),
        )
    }

    #[test]
    fn letters_skip_i_as_in_nist_handbook_tables() {
        // NIST/SEMATECH e-Handbook §5.3.3.4.7: the ninth factor is J (I is the identity).
        assert_eq!(letter(7), Some('H'));
        assert_eq!(letter(8), Some('J'));
        assert_eq!(letter(24), Some('Z'));
        assert_eq!(letter(25), None);
        assert_eq!(letter_index('I'), None);
        assert_eq!(letter_index('J'), Some(8));
    }

    #[test]
    fn product_cancels_repeated_letters() {
        // Box, Hunter & Hunter (2005) ch. 6: A · ABC = A²BC = BC.
        assert_eq!(w("A").times(w("ABC")), w("BC"));
        assert!(w("ABD").times(w("ABD")).is_identity());
    }

    #[test]
    fn order_and_factors() {
        assert_eq!(w("ACE").order(), 3);
        assert_eq!(w("ACE").factors(), vec![0, 2, 4]);
        assert!(w("ACE").contains(2));
        assert!(!w("ACE").contains(1));
    }

    #[test]
    fn letters_of_identity_is_i() {
        assert_eq!(letters(Word::IDENTITY), "I");
        assert_eq!(letters(w("ABD")), "ABD");
        assert_eq!(letters(Word::single(25)), "{26}");
    }

    #[test]
    fn display_order_is_order_then_letters() {
        // common practice: effect tables list A, B, AB, AC, BC, ABC.
        let mut terms = vec![w("ABC"), w("BC"), w("AC"), w("B"), w("AB"), w("A")];
        terms.sort_by(display_cmp);
        let names: Vec<String> = terms.into_iter().map(letters).collect();
        assert_eq!(names, vec!["A", "B", "AB", "AC", "BC", "ABC"]);
    }

    #[test]
    fn display_order_compares_first_differing_letter() {
        assert_eq!(display_cmp(&w("AD"), &w("BC")), Ordering::Less);
        assert_eq!(display_cmp(&w("ACD"), &w("ABE")), Ordering::Greater);
        assert_eq!(display_cmp(&w("AB"), &w("AB")), Ordering::Equal);
    }

    #[test]
    fn signed_label_uses_minus_sign() {
        let s = SignedWord {
            word: w("ABD"),
            sign: -1,
        };
        assert_eq!(s.label(), "\u{2212}ABD");
    }
}
