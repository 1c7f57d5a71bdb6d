//! The report's figures as SVG text: each function takes a small, self-contained input
//! and returns the SVG as a `String`, so the caller decides where the bytes go.
//!
//! All figures share `style.rs` (palette, fonts, number format) and are deterministic:
//! the same input gives the same bytes.

pub mod effect_bars;
pub mod half_normal;
pub mod interaction;
pub mod main_effects;
pub mod power;
pub mod run_order;
mod style;

pub use effect_bars::{Bar, EffectBars, effect_bars};
pub use half_normal::{HalfNormal, HalfNormalPoint, half_normal};
pub use interaction::{Interaction, interaction};
pub use main_effects::{MainEffectPanel, MainEffects, main_effects};
pub use power::{Candidate, Power, power};
pub use run_order::{Drift, RawPoint, Run, RunOrder, run_order};

/// A vertical or horizontal reference line with its name, e.g. the critical effect
/// `E_crit`, Lenth's `ME`/`SME`, or an acceptance limit. Drawn as "name = value".
#[derive(Debug, Clone, PartialEq)]
pub struct RefLine {
    /// Short name shown beside the line.
    pub name: String,
    /// Position on the value axis.
    pub value: f64,
}

/// Why a figure could not be drawn.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum PlotError {
    /// A list the figure needs is empty.
    #[error("failed to draw the {figure} plot (no {what} given; expected at least one)")]
    Empty {
        /// Figure name.
        figure: &'static str,
        /// What was missing.
        what: &'static str,
    },
    /// A number is NaN or infinite.
    #[error("failed to draw the {figure} plot ({field} is {value}; expected a finite number)")]
    NotFinite {
        /// Figure name.
        figure: &'static str,
        /// The offending input field, with its index.
        field: String,
        /// The value found.
        value: f64,
    },
    /// The input is inconsistent in some other way.
    #[error("failed to draw the {figure} plot ({reason})")]
    Invalid {
        /// Figure name.
        figure: &'static str,
        /// What is wrong and what would be valid.
        reason: String,
    },
    /// plotters' SVG backend reported an error (not expected for in-memory output).
    #[error("failed to draw the {figure} plot (svg backend: {message})")]
    Backend {
        /// Figure name.
        figure: &'static str,
        /// The backend's message.
        message: String,
    },
}

#[cfg(test)]
pub(crate) mod testutil {
    //! Checks shared by every figure's tests.

    /// Asserts the properties every figure must have: an `<svg>` document, no NaN/inf
    /// text, no transparency (PDF/A-1b), and the Libertinus family on all text.
    pub fn assert_clean_svg(svg: &str) {
        assert!(svg.starts_with("<svg"), "does not start with <svg");
        assert!(
            svg.trim_end().ends_with("</svg>"),
            "does not end with </svg>"
        );
        assert!(!svg.contains("NaN"), "contains NaN");
        assert!(!svg.contains("inf\""), "contains inf");
        assert!(
            !svg.contains(">inf") && !svg.contains("infinity"),
            "contains inf"
        );
        for part in svg.split("opacity=\"").skip(1) {
            let value: String = part.chars().take_while(|c| *c != '"').collect();
            let v: f64 = value.parse().expect("opacity is a number");
            assert!(v >= 1.0, "opacity {v} < 1 breaks PDF/A-1b");
        }
        assert!(!svg.contains("sans-serif"), "generic font family used");
        for tag in ["#273345", "#2E7D79", "#B0442D", "#9AA3AF", "#6B7481"] {
            assert!(
                !svg.contains(tag),
                "dash stand-in colour {tag} left in the svg"
            );
        }
        assert_eq!(
            svg.matches("<text").count(),
            svg.matches("font-family=\"Libertinus Serif\"").count(),
            "every text in Libertinus Serif"
        );
    }

    /// Writes a preview SVG under the scratch folder when PLATEAU_PLOT_PREVIEW is set.
    pub fn preview(name: &str, svg: &str) {
        if let Ok(dir) = std::env::var("PLATEAU_PLOT_PREVIEW") {
            let _ = std::fs::create_dir_all(&dir);
            let _ = std::fs::write(format!("{dir}/{name}.svg"), svg);
        }
    }
}
