//! Load types and their frequency exponents: the one table `nadir loads import` reads a `load_type`
//! cell against, each exponent with its source.
//!
//! The exponent k is the one of P = P0·(f/f0)^k (∂P/∂f in per unit). The component values are
//! Kundur, *Power System Stability and Control* (1994), Table 7.1, as reproduced in the NPTEL
//! course notes "Load characteristics" (a secondary source); resistive heating is from memory of
//! the same class of tables; constant power is common practice with no published source. Names are
//! matched after [`normalise`]: case, spaces, hyphens and underscores do not matter.

/// One load type: its name as documented, the exponent and where the value comes from.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LoadType {
    /// Name as written in docs/files.md (lower case, words joined by hyphens).
    pub name: &'static str,
    /// Frequency exponent k.
    pub freq_exp: f64,
    /// The source of the exponent, written beside it in the imported plant file.
    pub source: &'static str,
}

const KUNDUR: &str = "Kundur (1994) Table 7.1";

/// Every load type `loads import` knows, in the order docs/files.md lists them.
pub const LOAD_TYPES: [LoadType; 10] = [
    LoadType {
        name: "incandescent-lighting",
        freq_exp: 0.0,
        source: KUNDUR,
    },
    LoadType {
        name: "fluorescent-lighting",
        freq_exp: 1.0,
        source: KUNDUR,
    },
    LoadType {
        name: "refrigerator",
        freq_exp: 0.53,
        source: KUNDUR,
    },
    LoadType {
        name: "industrial-motor",
        freq_exp: 2.5,
        source: KUNDUR,
    },
    LoadType {
        name: "fan-motor",
        freq_exp: 2.9,
        source: KUNDUR,
    },
    LoadType {
        name: "agricultural-pump",
        freq_exp: 5.0,
        source: KUNDUR,
    },
    LoadType {
        name: "arc-furnace",
        freq_exp: -1.0,
        source: KUNDUR,
    },
    LoadType {
        name: "unloaded-transformer",
        freq_exp: 0.0,
        source: KUNDUR,
    },
    LoadType {
        name: "resistive-heating",
        freq_exp: 0.0,
        source: "resistive heating, from memory (no source at hand)",
    },
    LoadType {
        name: "constant-power",
        freq_exp: 0.0,
        source: "rectifier-fed supplies held at constant power: common practice, no source",
    },
];

/// A type name as compared: trimmed, lower case, runs of spaces, underscores and hyphens as one
/// hyphen.
pub fn normalise(name: &str) -> String {
    let mut out = String::new();
    for c in name.trim().chars() {
        if c == ' ' || c == '_' || c == '-' {
            if !out.is_empty() && !out.ends_with('-') {
                out.push('-');
            }
        } else {
            out.extend(c.to_lowercase());
        }
    }
    out.trim_end_matches('-').to_string()
}

/// The load type a cell names, if any.
pub fn find(name: &str) -> Option<&'static LoadType> {
    let n = normalise(name);
    LOAD_TYPES.iter().find(|t| t.name == n)
}

/// The known names, for a message.
pub fn names() -> String {
    LOAD_TYPES
        .iter()
        .map(|t| t.name)
        .collect::<Vec<_>>()
        .join(", ")
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Kundur (1994) Table 7.1 as reproduced in the NPTEL notes (../shared/REFERENCES.md §6):
    /// incandescent 0.0, fluorescent 1.0, refrigerator 0.53, industrial motors 2.5, fan motors
    /// 2.9, agricultural pumps 5.0, arc furnace −1.0, unloaded transformer 0.0.
    #[test]
    fn exponents_are_the_published_ones() {
        let k = |n: &str| find(n).unwrap().freq_exp;
        assert_eq!(k("incandescent-lighting"), 0.0);
        assert_eq!(k("fluorescent-lighting"), 1.0);
        assert_eq!(k("refrigerator"), 0.53);
        assert_eq!(k("industrial-motor"), 2.5);
        assert_eq!(k("fan-motor"), 2.9);
        assert_eq!(k("agricultural-pump"), 5.0);
        assert_eq!(k("arc-furnace"), -1.0);
        assert_eq!(k("unloaded-transformer"), 0.0);
    }

    #[test]
    fn names_match_whatever_the_case_and_separators() {
        assert_eq!(find("Fan Motor").unwrap().name, "fan-motor");
        assert_eq!(
            find("  INDUSTRIAL_motor ").unwrap().name,
            "industrial-motor"
        );
        assert_eq!(find("fan  -  motor").unwrap().name, "fan-motor");
        assert!(find("fan").is_none());
        for t in LOAD_TYPES {
            assert_eq!(normalise(t.name), t.name);
        }
    }
}
