//! The columns of a load list: each field of a plant-file load, the header names that mean it,
//! and how a header row is matched to them.
//!
//! Headers are compared after [`key`]: trimmed, lower case, spaces and hyphens as underscores, so
//! `Never shed`, `never-shed` and `NEVER_SHED` are one column. The table here is the documented
//! mapping (docs/files.md, section "load list"); `nadir loads export` writes the first name of each.

/// A field of a load that a column fills.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Field {
    Id,
    Section,
    PMw,
    Rank,
    NeverShed,
    LoadType,
    FreqExp,
    InertiaS,
    UvBelowPu,
    UvAfterS,
    Description,
}

/// One column: the field, the names that mean it (the first is the one written on export), and
/// whether a list must have it.
#[derive(Debug, Clone, Copy)]
pub struct Column {
    pub field: Field,
    pub names: &'static [&'static str],
    pub required: bool,
}

/// Every column, in the order `loads export` writes them (`load_type` is read only: the plant file
/// keeps the exponent, not the type).
pub const COLUMNS: [Column; 11] = [
    Column {
        field: Field::Id,
        names: &["id", "load_id", "load", "feeder"],
        required: true,
    },
    Column {
        field: Field::Section,
        names: &["section", "bus", "switchboard"],
        required: true,
    },
    Column {
        field: Field::PMw,
        names: &["p_mw", "mw", "load_mw"],
        required: true,
    },
    Column {
        field: Field::Rank,
        names: &["rank", "shed_rank"],
        required: true,
    },
    Column {
        field: Field::NeverShed,
        names: &["never_shed", "essential"],
        required: false,
    },
    Column {
        field: Field::LoadType,
        names: &["load_type", "type"],
        required: false,
    },
    Column {
        field: Field::FreqExp,
        names: &["freq_exp", "frequency_exponent", "kpf"],
        required: false,
    },
    Column {
        field: Field::InertiaS,
        names: &["inertia_s", "inertia"],
        required: false,
    },
    Column {
        field: Field::UvBelowPu,
        names: &["uv_below_pu", "undervoltage_below_pu"],
        required: false,
    },
    Column {
        field: Field::UvAfterS,
        names: &["uv_after_s", "undervoltage_after_s"],
        required: false,
    },
    Column {
        field: Field::Description,
        names: &["description", "name"],
        required: false,
    },
];

impl Field {
    /// The column of this field.
    pub fn column(self) -> &'static Column {
        COLUMNS
            .iter()
            .find(|c| c.field == self)
            .expect("every field has a column")
    }

    /// The name `loads export` writes and messages use.
    pub fn name(self) -> &'static str {
        self.column().names[0]
    }
}

/// A header as compared: trimmed, lower case, spaces and hyphens as underscores (runs as one).
pub fn key(header: &str) -> String {
    let mut out = String::new();
    for c in header.trim().chars() {
        if c == ' ' || c == '-' || c == '_' {
            if !out.is_empty() && !out.ends_with('_') {
                out.push('_');
            }
        } else {
            out.extend(c.to_lowercase());
        }
    }
    out.trim_end_matches('_').to_string()
}

/// The field a header names, if any.
pub fn field_of(header: &str) -> Option<Field> {
    let k = key(header);
    COLUMNS
        .iter()
        .find(|c| c.names.contains(&k.as_str()))
        .map(|c| c.field)
}

/// The fix for a header that names no field: units nadir does not read get their own hint.
pub fn unknown_header_help(header: &str) -> String {
    let k = key(header);
    if k.contains("kw") || k.contains("kva") || k == "mva" {
        return "nadir reads active power in MW: convert the column to MW and name it `p_mw`"
            .to_string();
    }
    if k.contains("priority") {
        return "nadir reads `rank`: rank 1 is shed first; check that your priority runs the same \
                way (or reverse it), then name the column `rank`"
            .to_string();
    }
    format!(
        "rename the column to one of {}, or delete it (columns nadir does not read are refused \
         so that a misspelt one is not silently ignored)",
        COLUMNS
            .iter()
            .map(|c| format!("`{}`", c.names[0]))
            .collect::<Vec<_>>()
            .join(", ")
    )
}

/// The spreadsheet letter of a 1-based column number (1 → A, 27 → AA).
pub fn letter(mut column: usize) -> String {
    let mut out = Vec::new();
    while column > 0 {
        let rem = (column - 1) % 26;
        out.push(b'A' + rem as u8);
        column = (column - 1) / 26;
    }
    out.reverse();
    String::from_utf8(out).unwrap_or_default()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn headers_match_whatever_the_case_and_separators() {
        assert_eq!(field_of("ID"), Some(Field::Id));
        assert_eq!(field_of(" Never Shed "), Some(Field::NeverShed));
        assert_eq!(field_of("never-shed"), Some(Field::NeverShed));
        assert_eq!(field_of("P_MW"), Some(Field::PMw));
        assert_eq!(field_of("Frequency exponent"), Some(Field::FreqExp));
        assert_eq!(field_of("kW"), None);
        assert!(unknown_header_help("kW").contains("MW"));
    }

    #[test]
    fn every_name_is_a_key_and_names_one_field() {
        let mut seen = std::collections::BTreeSet::new();
        for c in COLUMNS {
            for n in c.names {
                assert_eq!(key(n), *n);
                assert!(seen.insert(*n), "{n} twice");
            }
        }
    }

    #[test]
    fn letters() {
        assert_eq!(letter(1), "A");
        assert_eq!(letter(26), "Z");
        assert_eq!(letter(27), "AA");
    }
}
