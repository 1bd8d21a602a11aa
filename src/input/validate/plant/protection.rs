//! Protection elements of the plant file: frequency and ROCOF trips (of generators and of the
//! utility interface) and undervoltage trips (of generators and loads).

use super::*;

pub(super) fn frequency_trip(
    r: &mut Reader,
    path: &FieldPath,
    t: &RawFrequencyTrip,
    nominal: Option<f64>,
) -> Option<FrequencyTrip> {
    let (n_given, has) = written(&[
        ("below_hz", t.below_hz.is_some()),
        ("above_hz", t.above_hz.is_some()),
        ("rocof_hz_per_s", t.rocof_hz_per_s.is_some()),
    ]);
    if n_given != 1 {
        r.error(
            path,
            format!(
                "a frequency trip takes exactly one of below_hz, above_hz, rocof_hz_per_s; this one has {has}"
            ),
            if n_given == 0 {
                "add the setting, e.g. `below_hz: 47.5`".to_string()
            } else {
                "write one trip per setting, each with its own after_s".to_string()
            },
        );
        delay(r, &path.key("after_s"), t.after_s);
        return None;
    }
    let mut ok = delay(r, &path.key("after_s"), t.after_s);
    let trip = if let Some(hz) = t.below_hz {
        let p = path.key("below_hz");
        ok &= match nominal {
            Some(f0) => num(r, &p, hz, Lo::AtLeast(0.8 * f0), Hi::Below(f0), " Hz"),
            None => num(r, &p, hz, Lo::Above(0.0), Hi::Any, " Hz"),
        };
        FrequencyTrip::Under {
            hz,
            after_s: t.after_s,
        }
    } else if let Some(hz) = t.above_hz {
        let p = path.key("above_hz");
        ok &= match nominal {
            Some(f0) => num(r, &p, hz, Lo::Above(f0), Hi::AtMost(1.2 * f0), " Hz"),
            None => num(r, &p, hz, Lo::Above(0.0), Hi::Any, " Hz"),
        };
        FrequencyTrip::Over {
            hz,
            after_s: t.after_s,
        }
    } else {
        let v = t.rocof_hz_per_s.unwrap_or(0.0);
        ok &= num(
            r,
            &path.key("rocof_hz_per_s"),
            v,
            Lo::Above(0.0),
            Hi::AtMost(20.0),
            " Hz/s",
        );
        FrequencyTrip::Rocof {
            hz_per_s: v,
            after_s: t.after_s,
        }
    };
    ok.then_some(trip)
}

pub(super) fn undervoltage(
    r: &mut Reader,
    path: &FieldPath,
    u: &RawUndervoltage,
) -> UndervoltageTrip {
    num(
        r,
        &path.key("below_pu"),
        u.below_pu,
        Lo::Above(0.0),
        Hi::Below(1.0),
        " pu",
    );
    delay(r, &path.key("after_s"), u.after_s);
    UndervoltageTrip {
        below_pu: u.below_pu,
        after_s: u.after_s,
    }
}
