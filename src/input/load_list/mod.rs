//! The load list from a spreadsheet: a CSV load list read into the plant file's `loads:` block
//! (`nadir loads import`). Writing the plant's loads back as a list is `report::load_list`
//! (`nadir loads export`); the two round-trip: importing an exported list gives the same loads.
//!
//! Owns the list's columns and their accepted headings (`columns.rs`), the load types with their
//! frequency exponents and sources (`types.rs`), reading cells (`rows.rs`) and putting the block in
//! place of a plant file's own (`splice.rs`). Whether a value is allowed is decided once, by the
//! plant reader, on the plant file the list becomes; its diagnostics and plausibility warnings are
//! placed back at the list's row and column. The result is only returned once the plant reader
//! accepts it, so what `loads import` writes is a plant file nadir reads unchanged.

pub mod columns;
mod rows;
mod splice;
pub mod types;

pub use rows::{decimal_comma_help, delimiter, delimiter_hint};

use super::limits::{self, Limits};
use super::{Diagnostic, Loaded, Warning};
use crate::model::Plant;

/// A plant file with its loads replaced by a list's.
#[derive(Debug, Clone)]
pub struct Imported {
    /// The new plant file's text.
    pub text: String,
    /// That text as the plant reader reads it, with its warnings placed at the list's rows where
    /// they concern a load.
    pub plant: Loaded<Plant>,
    /// Loads whose exponent came from a load type.
    pub typed: usize,
}

/// Replaces the loads of the plant file `plant_text` (named `plant_file` in messages) by those of
/// the load list `list_text` (named `list_file`). Every mistake is returned at once: cells that
/// cannot be read, then (when every cell reads) whatever the plant reader refuses in the result.
pub fn import(
    plant_text: &str,
    plant_file: &str,
    list_text: &str,
    list_file: &str,
    limits: &Limits,
) -> Result<Imported, Vec<Diagnostic>> {
    let (read, mut mistakes) = rows::read(list_text, list_file, limits)?;
    let lines: Vec<&str> = plant_text.lines().collect();
    let Some(block) = splice::find_block(&lines) else {
        return Err(vec![Diagnostic {
            file: plant_file.to_string(),
            line: None,
            column: None,
            path: "loads".to_string(),
            message: "the plant file has no line starting with `loads:` for the list to replace"
                .to_string(),
            help: Some(
                "write the plant file's loads as a top-level `loads:` block (at the start of a \
                 line), as in examples/biorefinery/plant.yaml"
                    .to_string(),
            ),
        }]);
    };
    let new_block = splice::block_text(&read.rows, list_file);
    let mut out: Vec<&str> = lines[..block.start].to_vec();
    out.extend(new_block.iter().map(String::as_str));
    out.extend(&lines[block.end..]);
    let mut text = out.join("\n");
    text.push('\n');

    let map = splice::Map {
        block,
        first_load: block.start + 2,
        new_len: new_block.len(),
        rows: &read.rows,
        header: &read.header,
        list_file,
    };
    // The combined file may be larger than either input, each of which was within the limit.
    let limits = limits.clone().with(
        limits::FILE_BYTES,
        limits.get(limits::FILE_BYTES).max(text.len() as u64),
    );
    match super::plant_warned(&text, plant_file, &limits) {
        Ok(_) if !mistakes.is_empty() => Err(mistakes.finish()),
        Ok(loaded) => {
            let warnings = loaded
                .warnings
                .into_iter()
                .map(|w| {
                    let (file, line, column, path) = map.place(w.line, &w.path, plant_file);
                    Warning {
                        file,
                        line,
                        column: if line.is_some() {
                            column.or(w.column)
                        } else {
                            None
                        },
                        path,
                        ..w
                    }
                })
                .collect();
            Ok(Imported {
                typed: read.rows.iter().filter(|r| r.load_type.is_some()).count(),
                text,
                plant: Loaded {
                    value: loaded.value,
                    warnings,
                },
            })
        }
        Err(list) => {
            let cells_read = mistakes.is_empty();
            let mut plant_level = Vec::new();
            for d in list.into_iter().map(|d| splice::remap(d, &map, plant_file)) {
                if d.file == list_file {
                    mistakes.push(d);
                } else if cells_read {
                    // Plant-level verdicts (an operating point's balance) depend on the whole
                    // list, so they are shown only once every row has been read.
                    plant_level.push(d);
                }
            }
            let mut out = mistakes.finish();
            out.sort_by_key(|d| (d.file != list_file, d.line.is_none(), d.line, d.column));
            if !plant_level.is_empty() {
                out.extend(plant_level);
                out.push(totals_note(
                    plant_text, plant_file, &read.rows, list_file, &limits,
                ));
            }
            Err(out)
        }
    }
}

/// What changed in total when the plant file refuses the list for a plant-level reason: the
/// list's MW against the plant file's own loads, with the likely slips named.
fn totals_note(
    plant_text: &str,
    plant_file: &str,
    rows: &[rows::Row],
    list_file: &str,
    limits: &Limits,
) -> Diagnostic {
    let list_mw: f64 = rows.iter().map(|r| r.p_mw).sum();
    let before = super::plant_warned(plant_text, plant_file, limits)
        .ok()
        .map(|p| p.value);
    let mut message = format!(
        "the plant file is refused with the {} loads of {list_file} ({} MW in total)",
        rows.len(),
        super::validate::mw(list_mw)
    );
    let mut help = "an operating point with a fixed `import_mw` balances only the load it was \
                    written for: correct the list, or the plant file's dispatch and imports (or \
                    write `import_mw: balance`)"
        .to_string();
    if let Some(own) = &before {
        let own_mw: f64 = own.loads.iter().map(|l| l.p_mw).sum();
        message.push_str(&format!(
            "; with its own loads ({} MW) it is accepted",
            super::validate::mw(own_mw)
        ));
        // Rows a thousand times their own load in the plant file: MW written as kW.
        let grown: Vec<String> = rows
            .iter()
            .filter_map(|r| {
                let l = own.loads.iter().find(|l| l.id == r.id)?;
                (l.p_mw > 0.0 && r.p_mw >= 100.0 * l.p_mw).then(|| {
                    format!(
                        "row {} `{}` {} MW (the plant file has {} MW)",
                        r.line,
                        r.id,
                        super::validate::mw(r.p_mw),
                        super::validate::mw(l.p_mw)
                    )
                })
            })
            .take(5)
            .collect();
        if !grown.is_empty() {
            help = format!(
                "{}: if these are in kW, divide them by 1000",
                grown.join("; ")
            );
        } else if own_mw > 0.0 && list_mw >= 100.0 * own_mw {
            help = format!(
                "the list totals {:.0} times the plant's own loads: if its MW column is in kW, \
                 divide it by 1000",
                list_mw / own_mw
            );
        }
    }
    Diagnostic {
        file: list_file.to_string(),
        line: None,
        column: None,
        path: String::new(),
        message,
        help: Some(help),
    }
}
