//! Generators of the plant file: rating, inertia, output range, protection, and the governor with
//! its prime-mover model and the parameters each model takes.

use super::protection::undervoltage;
use super::*;

fn model_name(m: RawPrimeMover) -> &'static str {
    match m {
        RawPrimeMover::Steam => "steam",
        RawPrimeMover::SteamReheat => "steam-reheat",
        RawPrimeMover::Hydro => "hydro",
        RawPrimeMover::GasTurbine => "gas-turbine",
        RawPrimeMover::Engine => "engine",
        RawPrimeMover::Fixed => "fixed",
    }
}

pub(super) fn generator(
    r: &mut Reader,
    p: &FieldPath,
    g: &RawGenerator,
    section_ids: &Ids,
    nominal: Option<f64>,
) -> Option<Generator> {
    let section = resolve(r, section_ids, &p.key("section"), &g.section);
    let rating_ok = num(
        r,
        &p.key("rating_mva"),
        g.rating_mva,
        Lo::Above(0.0),
        Hi::Any,
        " MVA",
    );
    num(
        r,
        &p.key("inertia_s"),
        g.inertia_s,
        Lo::Above(0.0),
        Hi::AtMost(20.0),
        " s",
    );
    let min_ok = num(
        r,
        &p.key("min_mw"),
        g.min_mw,
        Lo::AtLeast(0.0),
        Hi::Any,
        " MW",
    );
    let max_mw = g.max_mw.unwrap_or(g.rating_mva);
    let mut max_ok = true;
    if let Some(m) = g.max_mw {
        max_ok = num(r, &p.key("max_mw"), m, Lo::Above(0.0), Hi::Any, " MW");
        if max_ok && rating_ok && m > g.rating_mva {
            r.error(
                &p.key("max_mw"),
                format!(
                    "max_mw {m} MW is above rating_mva {} MVA; a machine cannot give more MW than its rating",
                    g.rating_mva
                ),
                "lower max_mw or correct rating_mva".to_string(),
            );
            max_ok = false;
        }
    }
    if min_ok && max_ok && rating_ok && g.min_mw > max_mw {
        r.error(
            &p.key("min_mw"),
            format!("min_mw {} MW is above max_mw {max_mw} MW", g.min_mw),
            "min_mw is the lowest stable output and must not exceed max_mw".to_string(),
        );
    } else if num(
        r,
        &p.key("output_mw"),
        g.output_mw,
        Lo::AtLeast(0.0),
        Hi::Any,
        " MW",
    ) && min_ok
        && max_ok
        && rating_ok
        && (g.output_mw < g.min_mw || g.output_mw > max_mw)
    {
        r.error(
            &p.key("output_mw"),
            format!(
                "output_mw {} MW of generator `{}` is outside its range min_mw {} .. max_mw {max_mw} MW",
                g.output_mw, g.id, g.min_mw
            ),
            "dispatch the machine within its range, or list it under `offline` in the operating points where it does not run".to_string(),
        );
    }
    let governor = governor(r, &p.key("governor"), g, max_mw);
    let trips = g
        .trips
        .iter()
        .enumerate()
        .filter_map(|(i, t)| frequency_trip(r, &p.key("trips").index(i), t, nominal))
        .collect();
    let undervoltage_trips = g
        .undervoltage_trips
        .iter()
        .enumerate()
        .map(|(i, u)| undervoltage(r, &p.key("undervoltage_trips").index(i), u))
        .collect();
    let off_frequency_limits = g
        .off_frequency_limits
        .iter()
        .enumerate()
        .map(|(i, b)| {
            let bp = p.key("off_frequency_limits").index(i);
            num(
                r,
                &bp.key("low_hz"),
                b.low_hz,
                Lo::AtLeast(0.0),
                Hi::Any,
                " Hz",
            );
            num(
                r,
                &bp.key("high_hz"),
                b.high_hz,
                Lo::Above(b.low_hz),
                Hi::Any,
                " Hz",
            );
            num(
                r,
                &bp.key("max_s"),
                b.max_s,
                Lo::AtLeast(0.0),
                Hi::Any,
                " s",
            );
            OffFrequencyLimit {
                low_hz: b.low_hz,
                high_hz: b.high_hz,
                max_s: b.max_s,
            }
        })
        .collect();
    Some(Generator {
        id: g.id.clone(),
        section: section?,
        rating_mva: g.rating_mva,
        inertia_s: g.inertia_s,
        output_mw: g.output_mw,
        min_mw: g.min_mw,
        max_mw,
        governor,
        trips,
        undervoltage_trips,
        off_frequency_limits,
    })
}

fn governor(r: &mut Reader, p: &FieldPath, g: &RawGenerator, max_mw: f64) -> Governor {
    let gov = &g.governor;
    let model = model_name(gov.model);
    let params: [(&str, Option<f64>); 9] = [
        ("governor_s", gov.governor_s),
        ("turbine_s", gov.turbine_s),
        ("reheat_s", gov.reheat_s),
        ("hp_fraction", gov.hp_fraction),
        ("water_start_s", gov.water_start_s),
        ("transient_droop_pct", gov.transient_droop_pct),
        ("reset_s", gov.reset_s),
        ("load_limit_mw", gov.load_limit_mw),
        ("ramp_mw_per_s", gov.ramp_mw_per_s),
    ];
    let own: &[&str] = match gov.model {
        RawPrimeMover::Steam => &["governor_s", "turbine_s"],
        RawPrimeMover::SteamReheat => &["governor_s", "reheat_s", "hp_fraction"],
        RawPrimeMover::Hydro => &[
            "governor_s",
            "water_start_s",
            "transient_droop_pct",
            "reset_s",
        ],
        RawPrimeMover::GasTurbine => &["governor_s", "turbine_s", "load_limit_mw"],
        RawPrimeMover::Engine => &["governor_s", "ramp_mw_per_s"],
        RawPrimeMover::Fixed => &[],
    };
    let fixed = gov.model == RawPrimeMover::Fixed;
    let takes = if fixed {
        "it takes no parameters besides model".to_string()
    } else {
        format!(
            "it takes {}, droop_pct, deadband_hz, isochronous",
            own.join(", ")
        )
    };
    let refuse = |r: &mut Reader, name: &str| {
        r.error_at_key(
            &p.key(name),
            format!("{name} is not a parameter of model {model}; {takes}"),
            format!("remove {name}, or choose the model it belongs to"),
        );
    };
    for (name, value) in params {
        if value.is_some() && !own.contains(&name) {
            refuse(r, name);
        }
    }
    let isochronous = gov.isochronous.unwrap_or(false);
    if fixed {
        if isochronous {
            r.error(
                &p.key("isochronous"),
                "a machine with model fixed has no governor, so it cannot be isochronous"
                    .to_string(),
                "remove isochronous, or give the machine a prime-mover model with a governor"
                    .to_string(),
            );
        }
        if gov.droop_pct.is_some() {
            refuse(r, "droop_pct");
        }
        if gov.deadband_hz.is_some() {
            refuse(r, "deadband_hz");
        }
    }

    let droop_pct = match gov.droop_pct {
        Some(v) => {
            num(
                r,
                &p.key("droop_pct"),
                v,
                Lo::Above(0.0),
                Hi::AtMost(20.0),
                " %",
            );
            v
        }
        None => {
            if !fixed && !isochronous {
                r.error(
                    &p.key("droop_pct"),
                    format!(
                        "missing droop_pct for generator `{}` with model {model}",
                        g.id
                    ),
                    "add the governor's permanent droop in percent on the machine rating \
                     (commonly 4 to 5), or set `isochronous: true`"
                        .to_string(),
                );
            }
            d::ISOCHRONOUS_DROOP_PCT
        }
    };
    let deadband_hz = match gov.deadband_hz {
        Some(v) => {
            num(
                r,
                &p.key("deadband_hz"),
                v,
                Lo::AtLeast(0.0),
                Hi::AtMost(0.5),
                " Hz",
            );
            v
        }
        None => d::DEADBAND_HZ,
    };

    let tc = |r: &mut Reader, name: &str, v: Option<f64>, default: f64| -> f64 {
        match v {
            Some(x) => {
                time_constant(r, &p.key(name), x);
                x
            }
            None => default,
        }
    };
    let prime_mover = match gov.model {
        RawPrimeMover::Steam => PrimeMover::Steam {
            governor_s: tc(r, "governor_s", gov.governor_s, d::STEAM_GOVERNOR_S),
            turbine_s: tc(r, "turbine_s", gov.turbine_s, d::STEAM_TURBINE_S),
        },
        RawPrimeMover::SteamReheat => {
            let hp_fraction = gov.hp_fraction.unwrap_or(d::REHEAT_HP_FRACTION);
            if gov.hp_fraction.is_some() {
                num(
                    r,
                    &p.key("hp_fraction"),
                    hp_fraction,
                    Lo::AtLeast(0.0),
                    Hi::AtMost(1.0),
                    "",
                );
            }
            PrimeMover::SteamReheat {
                governor_s: tc(r, "governor_s", gov.governor_s, d::REHEAT_GOVERNOR_S),
                reheat_s: tc(r, "reheat_s", gov.reheat_s, d::REHEAT_REHEAT_S),
                hp_fraction,
            }
        }
        RawPrimeMover::Hydro => {
            let water_start_s = gov.water_start_s.unwrap_or(d::HYDRO_WATER_START_S);
            if gov.water_start_s.is_some() {
                num(
                    r,
                    &p.key("water_start_s"),
                    water_start_s,
                    Lo::Above(0.0),
                    Hi::AtMost(10.0),
                    " s",
                );
            }
            let transient_droop_pct = gov
                .transient_droop_pct
                .unwrap_or(d::HYDRO_TRANSIENT_DROOP_PCT);
            if gov.transient_droop_pct.is_some() {
                num(
                    r,
                    &p.key("transient_droop_pct"),
                    transient_droop_pct,
                    Lo::Above(0.0),
                    Hi::AtMost(100.0),
                    " %",
                );
            }
            PrimeMover::Hydro {
                governor_s: tc(r, "governor_s", gov.governor_s, d::HYDRO_GOVERNOR_S),
                water_start_s,
                transient_droop_pct,
                reset_s: tc(r, "reset_s", gov.reset_s, d::HYDRO_RESET_S),
            }
        }
        RawPrimeMover::GasTurbine => {
            let load_limit_mw = gov.load_limit_mw.unwrap_or(max_mw);
            if gov.load_limit_mw.is_some() {
                num(
                    r,
                    &p.key("load_limit_mw"),
                    load_limit_mw,
                    Lo::Above(0.0),
                    Hi::Any,
                    " MW",
                );
            }
            PrimeMover::GasTurbine {
                governor_s: tc(r, "governor_s", gov.governor_s, d::GAS_TURBINE_GOVERNOR_S),
                turbine_s: tc(r, "turbine_s", gov.turbine_s, d::GAS_TURBINE_TURBINE_S),
                load_limit_mw,
            }
        }
        RawPrimeMover::Engine => {
            let ramp = gov
                .ramp_mw_per_s
                .unwrap_or(d::ENGINE_RAMP_PU_PER_S * g.rating_mva);
            if gov.ramp_mw_per_s.is_some() {
                num(
                    r,
                    &p.key("ramp_mw_per_s"),
                    ramp,
                    Lo::Above(0.0),
                    Hi::Any,
                    " MW/s",
                );
            }
            PrimeMover::Engine {
                governor_s: tc(r, "governor_s", gov.governor_s, d::ENGINE_GOVERNOR_S),
                ramp_mw_per_s: ramp,
            }
        }
        RawPrimeMover::Fixed => PrimeMover::Fixed,
    };
    let pressure_control = gov
        .pressure_control
        .as_ref()
        .and_then(|pc| pressure_control(r, &p.key("pressure_control"), g, pc, model));
    Governor {
        droop_pct,
        deadband_hz,
        isochronous,
        prime_mover,
        pressure_control,
    }
}

/// Process-steam pressure control: steam machines only; a transfer time like any relay delay;
/// header extra and its rise not negative, and a rise when there is extra to give.
fn pressure_control(
    r: &mut Reader,
    p: &FieldPath,
    g: &RawGenerator,
    pc: &RawPressureControl,
    model: &str,
) -> Option<PressureControl> {
    if !matches!(
        g.governor.model,
        RawPrimeMover::Steam | RawPrimeMover::SteamReheat
    ) {
        r.error_at_key(
            p,
            format!(
                "pressure_control is for steam machines; generator `{}` has model {model}",
                g.id
            ),
            "remove pressure_control, or give the machine model steam or steam-reheat".to_string(),
        );
        return None;
    }
    let transfer_ok = delay(r, &p.key("transfer_s"), pc.transfer_s);
    let extra_ok = num(
        r,
        &p.key("extra_mw"),
        pc.extra_mw,
        Lo::AtLeast(0.0),
        Hi::Any,
        " MW",
    );
    let rate_ok = num(
        r,
        &p.key("extra_mw_per_s"),
        pc.extra_mw_per_s,
        Lo::AtLeast(0.0),
        Hi::Any,
        " MW/s",
    );
    if extra_ok && rate_ok && pc.extra_mw > 0.0 && pc.extra_mw_per_s == 0.0 {
        r.error(
            &p.key("extra_mw_per_s"),
            format!(
                "extra_mw_per_s is 0, so the headers' extra_mw {} MW would never come",
                mw(pc.extra_mw)
            ),
            "give the fastest rise the steam headers allow in MW/s, or write extra_mw: 0 for a \
             machine that cannot raise its output"
                .to_string(),
        );
        return None;
    }
    (transfer_ok && extra_ok && rate_ok).then_some(PressureControl {
        transfer_s: pc.transfer_s,
        extra_mw: pc.extra_mw,
        extra_mw_per_s: pc.extra_mw_per_s,
    })
}
