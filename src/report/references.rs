//! The published methods the chapter relies on, in citation order, each with what it is
//! used for (only the methods the study actually uses are cited).

use serde::Serialize;

use crate::pipeline::Evaluated;

/// A published source, split so a template can style it.
#[derive(Debug, Clone, Serialize)]
pub struct Reference {
    /// Authors as usually cited.
    pub authors: String,
    /// Year of publication.
    pub year: String,
    /// Title of the paper or book.
    pub title: String,
    /// Journal with volume and pages, or publisher.
    pub source: String,
    /// What the chapter uses it for.
    pub used_for: String,
}

/// The published methods the chapter uses, chosen from the design and what is shown.
///
/// Each entry is a standard citation of the source (authors, year, title, where published).
pub fn references(evaluated: &Evaluated, has_figures: bool) -> Vec<Reference> {
    let design = &evaluated.design;
    let kind = design.kind;
    let mut out = vec![Reference {
        authors:
            "Y. Vander Heyden, A. Nijhuis, J. Smeyers-Verbeke, B. G. M. Vandeginste, D. L. Massart"
                .into(),
        year: "2001".into(),
        title: "Guidance for robustness/ruggedness tests in method validation".into(),
        source: "Journal of Pharmaceutical and Biomedical Analysis 24, 723–753".into(),
        used_for: "procedure of the robustness test; percent effects against a reference".into(),
    }];
    out.push(Reference {
        authors: "G. E. P. Box, J. S. Hunter, W. G. Hunter".into(),
        year: "2005".into(),
        title: "Statistics for Experimenters: Design, Innovation, and Discovery, 2nd edition"
            .into(),
        source: "Wiley, Hoboken NJ".into(),
        used_for: "two-level designs; effects as differences of means".into(),
    });
    if matches!(
        kind,
        crate::study::DesignKind::FractionalFactorial | crate::study::DesignKind::Youden
    ) && !design.structure.youden
    {
        out.push(Reference {
            authors: "D. C. Montgomery".into(),
            year: "2001".into(),
            title: "Design and Analysis of Experiments, 5th edition".into(),
            source: "Wiley, New York".into(),
            used_for: if design.structure.catalogue.is_some() {
                "fractional factorial designs: generators (Table 8-14), defining relation and aliases".into()
            } else {
                "fractional factorial designs: defining relation, resolution and aliases".into()
            },
        });
    }
    if kind == crate::study::DesignKind::PlackettBurman {
        out.push(Reference {
            authors: "R. L. Plackett, J. P. Burman".into(),
            year: "1946".into(),
            title: "The design of optimum multifactorial experiments".into(),
            source: "Biometrika 33, 305–325".into(),
            used_for: "Plackett–Burman screening design".into(),
        });
    }
    if kind == crate::study::DesignKind::Youden || design.structure.youden {
        out.push(Reference {
            authors: "W. J. Youden, E. H. Steiner".into(),
            year: "1975".into(),
            title: "Statistical Manual of the Association of Official Analytical Chemists".into(),
            source: "AOAC, Washington DC".into(),
            used_for: "ruggedness design of seven factors in eight runs".into(),
        });
    }
    if has_figures {
        out.push(Reference {
            authors: "C. Daniel".into(),
            year: "1959".into(),
            title: "Use of half-normal plots in interpreting factorial two-level experiments"
                .into(),
            source: "Technometrics 1, 311–341".into(),
            used_for: "half-normal plot of the effects".into(),
        });
    }
    let study = &evaluated.study;
    let analysis = &evaluated.analysis;
    let uses = |m: &str| {
        analysis
            .responses
            .iter()
            .any(|r| r.criteria.iter().any(|c| c.method == m))
    };
    let reference =
        |authors: &str, year: &str, title: &str, source: &str, used_for: &str| Reference {
            authors: authors.into(),
            year: year.into(),
            title: title.into(),
            source: source.into(),
            used_for: used_for.into(),
        };
    if uses("lenth") {
        out.push(reference(
            "R. V. Lenth",
            "1989",
            "Quick and easy analysis of unreplicated factorials",
            "Technometrics 31, 469–473",
            "pseudo standard error, margin of error ME and simultaneous margin of error SME",
        ));
    }
    if uses("dong") {
        out.push(reference(
            "F. Dong",
            "1993",
            "On the identification of active contrasts in unreplicated fractional factorials",
            "Statistica Sinica 3, 209–217",
            "critical effect by Dong's algorithm",
        ));
    }
    if uses("anova")
        || analysis
            .responses
            .iter()
            .any(|r| r.anova.is_some() || r.curvature.is_some())
    {
        out.push(reference(
            "D. C. Montgomery",
            "2001",
            "Design and Analysis of Experiments, 5th edition",
            "Wiley, New York",
            "analysis of variance with pure error; curvature from centre points",
        ));
    }
    if analysis.responses.iter().any(|r| r.worst_case.is_some()) {
        out.push(reference("Y. Vander Heyden, F. Questier, D. L. Massart", "1999", "Ruggedness testing of chromatographic methods: selection of factors and levels", "Journal of Pharmaceutical and Biomedical Analysis 18, 43–56; with the worst-case prediction of system-suitability limits in J. Chromatogr. A 845 (1999) 145–154", "worst-case prediction and system-suitability limits"));
    }
    if analysis.responses.iter().any(|r| r.uncertainty.is_some()) {
        out.push(reference("JCGM", "2008", "Evaluation of measurement data — Guide to the expression of uncertainty in measurement (JCGM 100:2008)", "BIPM, Sèvres", "standard uncertainties of the routine variations"));
        out.push(reference("S. L. R. Ellison, A. Williams (eds.)", "2012", "Quantifying Uncertainty in Analytical Measurement, 3rd edition (Eurachem/CITAC Guide CG4)", "Eurachem", "uncertainty contributions from robustness effects"));
    }
    if study.source == crate::study::model::SourceKind::Development {
        out.push(reference(
            "ICH",
            "2023",
            "Q14: Analytical Procedure Development",
            "International Council for Harmonisation",
            "robustness shown during development",
        ));
    }
    // One entry per work, first use kept.
    let mut seen = std::collections::BTreeSet::new();
    out.retain(|r| seen.insert((r.authors.clone(), r.year.clone(), r.title.clone())));
    out
}
