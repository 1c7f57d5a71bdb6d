//! The dialect a study may declare for its results CSV (`results: { separator, decimal,
//! encoding }`): the words of the study file. Detecting the dialect of a file is the job of
//! the measurements stage.

use serde::{Deserialize, Serialize};

/// Column separator.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Separator {
    /// `,`
    Comma,
    /// `;`
    Semicolon,
    /// a tab character
    Tab,
}

impl Separator {
    /// The byte that separates columns.
    pub fn byte(self) -> u8 {
        match self {
            Separator::Comma => b',',
            Separator::Semicolon => b';',
            Separator::Tab => b'\t',
        }
    }

    /// The name as written in the study file.
    pub fn as_str(self) -> &'static str {
        match self {
            Separator::Comma => "comma",
            Separator::Semicolon => "semicolon",
            Separator::Tab => "tab",
        }
    }
}

/// Decimal mark of the numbers.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Decimal {
    /// `99.5`
    Point,
    /// `99,5`
    Comma,
}

impl Decimal {
    /// The name as written in the study file.
    pub fn as_str(self) -> &'static str {
        match self {
            Decimal::Point => "point",
            Decimal::Comma => "comma",
        }
    }
}

/// Text encoding of the file.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Encoding {
    /// UTF-8, with or without a byte-order mark.
    #[serde(rename = "utf-8")]
    Utf8,
    /// UTF-16 with a byte-order mark (little or big endian).
    #[serde(rename = "utf-16")]
    Utf16,
    /// Windows-1252 (Western European), as older spreadsheets save "CSV".
    #[serde(rename = "windows-1252")]
    Windows1252,
    /// ISO-8859-1; read as Windows-1252, its superset for every printable character
    /// (WHATWG Encoding Standard, the label `latin1`).
    #[serde(rename = "latin-1")]
    Latin1,
}

impl Encoding {
    /// The name as written in the study file.
    pub fn as_str(self) -> &'static str {
        match self {
            Encoding::Utf8 => "utf-8",
            Encoding::Utf16 => "utf-16",
            Encoding::Windows1252 => "windows-1252",
            Encoding::Latin1 => "latin-1",
        }
    }
}
