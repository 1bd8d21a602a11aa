//! Loads of the plant file: size, rank, frequency and inertia response, undervoltage trip.

use super::protection::undervoltage;
use super::*;

pub(super) fn load(r: &mut Reader, p: &FieldPath, l: &RawLoad, section_ids: &Ids) -> Option<Load> {
    let section = resolve(r, section_ids, &p.key("section"), &l.section);
    num(r, &p.key("p_mw"), l.p_mw, Lo::AtLeast(0.0), Hi::Any, " MW");
    if l.rank == 0 {
        r.error(
            &p.key("rank"),
            format!("rank of load `{}` is 0; ranks start at 1", l.id),
            "use rank 1 for the loads shed first and higher ranks for more important loads"
                .to_string(),
        );
    }
    let freq_exp = l.freq_exp.unwrap_or(d::LOAD_FREQ_EXP);
    if l.freq_exp.is_some() {
        num(
            r,
            &p.key("freq_exp"),
            freq_exp,
            Lo::AtLeast(-2.0),
            Hi::AtMost(8.0),
            "",
        );
    }
    let inertia_s = l.inertia_s.unwrap_or(0.0);
    if l.inertia_s.is_some() {
        num(
            r,
            &p.key("inertia_s"),
            inertia_s,
            Lo::AtLeast(0.0),
            Hi::AtMost(20.0),
            " s",
        );
    }
    let uv = l
        .undervoltage
        .as_ref()
        .map(|u| undervoltage(r, &p.key("undervoltage"), u));
    Some(Load {
        id: l.id.clone(),
        description: l.description.clone().unwrap_or_default(),
        section: section?,
        p_mw: l.p_mw,
        rank: l.rank,
        never_shed: l.never_shed,
        freq_exp,
        inertia_s,
        undervoltage: uv,
    })
}
