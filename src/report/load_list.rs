//! The plant's loads as a CSV load list (`nadir loads export`): one row per load, in the plant
//! file's order, under the column names `nadir loads import` reads (`input::load_list::columns`),
//! so that importing the list gives the same loads back.
//!
//! Numbers are written as the shortest text that reads back to the same value; text cells pass
//! through [`super::output::csv_cell`] (the import removes the apostrophe it may add). The load
//! type is not written: the plant file keeps the exponent, not the type it came from.

use crate::input::load_list::columns::{Field, COLUMNS};
use crate::model::Plant;

/// The columns written, in order.
const WRITTEN: [Field; 10] = [
    Field::Id,
    Field::Section,
    Field::PMw,
    Field::Rank,
    Field::NeverShed,
    Field::FreqExp,
    Field::InertiaS,
    Field::UvBelowPu,
    Field::UvAfterS,
    Field::Description,
];

/// The plant's loads as CSV text.
pub fn csv(plant: &Plant) -> String {
    debug_assert!(WRITTEN
        .iter()
        .all(|f| COLUMNS.iter().any(|c| c.field == *f)));
    let mut w = csv::Writer::from_writer(Vec::new());
    let head: Vec<&str> = WRITTEN.iter().map(|f| f.name()).collect();
    let mut rows = vec![head.iter().map(|s| s.to_string()).collect::<Vec<_>>()];
    for l in &plant.loads {
        let (below, after) = match &l.undervoltage {
            Some(u) => (num(u.below_pu), num(u.after_s)),
            None => (String::new(), String::new()),
        };
        rows.push(vec![
            super::output::csv_cell(&l.id),
            super::output::csv_cell(&plant.sections[l.section].id),
            num(l.p_mw),
            l.rank.to_string(),
            if l.never_shed { "yes" } else { "no" }.to_string(),
            num(l.freq_exp),
            if l.inertia_s == 0.0 {
                String::new()
            } else {
                num(l.inertia_s)
            },
            below,
            after,
            super::output::csv_cell(&l.description),
        ]);
    }
    for r in rows {
        // Writing to a Vec cannot fail.
        let _ = w.write_record(&r);
    }
    let bytes = w.into_inner().unwrap_or_default();
    String::from_utf8(bytes).unwrap_or_default()
}

/// The shortest text that reads back to the same number.
fn num(v: f64) -> String {
    format!("{v}")
}
