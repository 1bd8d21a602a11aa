//! The plant file's acceptance criteria: frequency limits and their order, ROCOF, recovery,
//! settling, required margins and coordination rules.

use super::*;

pub(super) fn criteria(
    r: &mut Reader,
    raw: Option<&RawCriteria>,
    nominal: Option<f64>,
) -> Criteria {
    let f0 = nominal.unwrap_or(50.0);
    let mut c = Criteria::defaults(f0);
    let Some(raw) = raw else {
        return c;
    };
    let p = FieldPath::root().key("criteria");
    if let Some(v) = raw.min_hz {
        c.min_hz = v;
    }
    if let Some(v) = raw.max_hz {
        c.max_hz = v;
    }
    if let Some(rec) = &raw.recover {
        c.recover_above_hz = rec.above_hz;
        c.recover_within_s = rec.within_s;
        num(
            r,
            &p.key("recover").key("within_s"),
            rec.within_s,
            Lo::Above(0.0),
            Hi::AtMost(3600.0),
            " s",
        );
    }
    if let Some(v) = raw.max_rocof_hz_per_s {
        c.max_rocof_hz_per_s = v;
        num(
            r,
            &p.key("max_rocof_hz_per_s"),
            v,
            Lo::Above(0.0),
            Hi::AtMost(20.0),
            " Hz/s",
        );
    }
    if let Some(v) = raw.rocof_window_s {
        c.rocof_window_s = v;
        num(
            r,
            &p.key("rocof_window_s"),
            v,
            Lo::Above(0.0),
            Hi::AtMost(5.0),
            " s",
        );
    }
    if let Some(s) = &raw.settle {
        c.settle_within_s = s.within_s;
        c.settle_low_hz = s.low_hz;
        c.settle_high_hz = s.high_hz;
        num(
            r,
            &p.key("settle").key("within_s"),
            s.within_s,
            Lo::AtLeast(0.0),
            Hi::AtMost(3600.0),
            " s",
        );
    }
    if let Some(m) = &raw.required_margin {
        if let Some(v) = m.disturbance_factor {
            c.required_disturbance_factor = v;
            c.margins_written |= v > 1.0;
            num(
                r,
                &p.key("required_margin").key("disturbance_factor"),
                v,
                Lo::AtLeast(1.0),
                Hi::AtMost(2.0),
                "",
            );
        }
        if let Some(v) = m.model_error_pct {
            c.required_model_error_pct = v;
            c.margins_written |= v > 0.0;
            num(
                r,
                &p.key("required_margin").key("model_error_pct"),
                v,
                Lo::AtLeast(0.0),
                Hi::AtMost(50.0),
                " %",
            );
        }
    }
    if let Some(k) = &raw.coordination {
        if let Some(v) = k.min_spacing_hz {
            c.min_spacing_hz = v;
            num(
                r,
                &p.key("coordination").key("min_spacing_hz"),
                v,
                Lo::AtLeast(0.0),
                Hi::AtMost(2.0),
                " Hz",
            );
        }
        if let Some(v) = k.min_spacing_s {
            c.min_spacing_s = v;
            num(
                r,
                &p.key("coordination").key("min_spacing_s"),
                v,
                Lo::AtLeast(0.0),
                Hi::AtMost(60.0),
                " s",
            );
        }
        if let Some(v) = k.normal_low_hz {
            c.normal_low_hz = v;
            num(
                r,
                &p.key("coordination").key("normal_low_hz"),
                v,
                Lo::Above(0.8 * f0),
                Hi::Below(f0),
                " Hz",
            );
        }
    }
    if nominal.is_none() {
        return c;
    }
    // Frequencies: each within 0.8–1.2 f0 and in the order a criterion needs.
    let order_help = format!(
        "criteria need min_hz < recover.above_hz < nominal {f0} Hz < max_hz, and settle.low_hz < {f0} Hz < settle.high_hz"
    );
    let order = |r: &mut Reader,
                 path: FieldPath,
                 v: f64,
                 lo: f64,
                 lo_name: &str,
                 hi: f64,
                 hi_name: &str| {
        if !v.is_finite() {
            r.error(
                &path,
                format!("{} is {v}, expected a finite number", field_name(&path)),
                None,
            );
        } else if v < 0.8 * f0 || v > 1.2 * f0 {
            r.error(
                &path,
                format!(
                    "{} {v} Hz is implausible for a {f0} Hz plant",
                    field_name(&path)
                ),
                format!(
                    "allowed: {} ≤ {} ≤ {} Hz",
                    0.8 * f0,
                    field_name(&path),
                    1.2 * f0
                ),
            );
        } else if v <= lo || v >= hi {
            let (bad, other_name, other) = if v <= lo {
                ("at or below", lo_name, lo)
            } else {
                ("at or above", hi_name, hi)
            };
            r.error(
                &path,
                format!(
                    "{} {v} Hz is {bad} {other_name} {other} Hz",
                    field_name(&path)
                ),
                order_help.clone(),
            );
        }
    };
    let given = |o: Option<f64>| o.is_some();
    if given(raw.min_hz) {
        order(
            r,
            p.key("min_hz"),
            c.min_hz,
            0.0,
            "zero",
            // A conflict with a written recover.above_hz is reported once, there.
            if raw.recover.is_some() {
                f0
            } else {
                c.recover_above_hz
            },
            if raw.recover.is_some() {
                "nominal"
            } else {
                "the default recover.above_hz"
            },
        );
    }
    if raw.recover.is_some() {
        order(
            r,
            p.key("recover").key("above_hz"),
            c.recover_above_hz,
            c.min_hz,
            "min_hz",
            f0,
            "nominal",
        );
    }
    if given(raw.max_hz) {
        order(
            r,
            p.key("max_hz"),
            c.max_hz,
            f0,
            "nominal",
            f64::INFINITY,
            "",
        );
    }
    if raw.settle.is_some() {
        order(
            r,
            p.key("settle").key("low_hz"),
            c.settle_low_hz,
            0.0,
            "zero",
            f0,
            "nominal",
        );
        order(
            r,
            p.key("settle").key("high_hz"),
            c.settle_high_hz,
            f0,
            "nominal",
            f64::INFINITY,
            "",
        );
    }
    c
}
