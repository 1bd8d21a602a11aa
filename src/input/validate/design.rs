//! The plant file's `design` block: the limits within which `nadir design` may propose a
//! shedding table (stage count, pickup and delay grids, breaker time, arming breakers, df/dt
//! supervision, rank weights), checked against each other, the criteria and the plant.
//!
//! Owns the design block's validation messages. An absent block gives
//! [`DesignLimits::defaults`] unchecked; in a written block every omitted value takes its
//! default first, so a written value that clashes with a default is reported at the written one.
//! Checks that compare with the criteria run only when the criteria themselves were accepted, so
//! one mistake there does not also show up here.

use super::*;

/// Most under-frequency stages a design may be asked for: a bound on the search, not a rule of
/// the trade (plant-level tables rarely have more than about six).
const MAX_STAGES: u32 = 20;

/// Largest rank weight: the objective sums weight × MW over every row, and a bound keeps it
/// finite (weights near 1e308 made it infinite) and within the assignment solver's precision.
pub const MAX_RANK_WEIGHT: f64 = 1e6;

/// Slack for comparing frequencies and counting grid points: values written to 0.1 Hz or 0.05 s
/// are not exact in binary, and a grid must not lose its last point to rounding.
const EPS: f64 = 1e-9;

/// The design limits from the block's values: everything but `armed_by`, which needs the built
/// plant ([`armed_by`]). `criteria` is `None` when the criteria (or the nominal frequency) gave a
/// diagnostic; `generators` are the plant's machines as far as they validated.
pub(super) fn limits(
    r: &mut Reader,
    raw: Option<&RawDesign>,
    nominal: Option<f64>,
    criteria: Option<&Criteria>,
    generators: &[Option<Generator>],
    has_utility: bool,
) -> DesignLimits {
    let mut lim = DesignLimits::defaults(nominal.unwrap_or(50.0), has_utility);
    let Some(raw) = raw else {
        // The default grid counts against the limit too, so a lowered limit binds it.
        grid_size(r, &FieldPath::root().key("design"), &lim);
        return lim;
    };
    let p = FieldPath::root().key("design");
    let stages_ok = stage_count(r, &p.key("stages"), raw.stages.as_ref(), &mut lim);
    let pickups_ok = pickup_grid(
        r,
        &p.key("pickup_hz"),
        raw.pickup_hz.as_ref(),
        nominal,
        &mut lim,
    );
    let delays_ok = delay_grid(r, &p.key("delay_s"), raw.delay_s.as_ref(), &mut lim);
    if pickups_ok && delays_ok {
        grid_size(r, &p, &lim);
    }
    if let Some(v) = raw.breaker_s {
        num(
            r,
            &p.key("breaker_s"),
            v,
            Lo::AtLeast(0.0),
            Hi::Below(1.0),
            " s",
        );
        lim.breaker_s = v;
    }
    if let Some(v) = raw.rocof_supervision_hz_per_s {
        num(
            r,
            &p.key("rocof_supervision_hz_per_s"),
            v,
            Lo::Above(0.0),
            Hi::AtMost(20.0),
            " Hz/s",
        );
        lim.rocof_supervision_hz_per_s = Some(v);
    }
    if let Some(b) = raw.backstop {
        lim.backstop = b;
    }
    if let Some(ld) = &raw.long_delay {
        lim.long_delay = long_delay(
            r,
            &p.key("long_delay"),
            ld,
            nominal,
            criteria,
            &lim,
            pickups_ok && delays_ok,
        );
    }
    for (&rank, &weight) in &raw.rank_weights {
        let wp = p.key("rank_weights").key(&rank.to_string());
        if rank == 0 {
            r.error_at_key(
                &wp,
                "rank_weights names rank 0; ranks start at 1".to_string(),
                "key each weight by a load rank, 1 or higher".to_string(),
            );
            continue;
        }
        if !(weight.is_finite() && weight > 0.0 && weight <= MAX_RANK_WEIGHT) {
            r.error(
                &wp,
                format!(
                    "the weight of rank {rank} is {weight}, expected a number greater than 0 and \
                     at most {MAX_RANK_WEIGHT}"
                ),
                "write the objective weight per MW shed of that rank, e.g. the rank's own number; \
                 weights are relative, so a million to one already makes one rank's MW all but \
                 free against another's"
                    .to_string(),
            );
        }
        lim.rank_weights.push((rank, weight));
    }
    if pickups_ok {
        let above_min = match criteria {
            Some(c) => against_criteria(r, &p, &lim, c, stages_ok),
            None => true,
        };
        // Below the minimum frequency is said already; a machine trip there would repeat it.
        if above_min {
            above_generator_trips(r, &p, &lim, generators);
        }
    }
    lim
}

/// The long-delay stage's grid: pickups below the normal band's lower edge and above the
/// ordinary stages' highest pickup, delays longer than theirs and shorter than the recovery
/// time (a later stage could not help the recovery criterion), at most
/// [`MAX_LONG_DELAY_POINTS`] points. `None` when any value is wrong (the error is reported).
fn long_delay(
    r: &mut Reader,
    p: &FieldPath,
    raw: &RawLongDelay,
    nominal: Option<f64>,
    criteria: Option<&Criteria>,
    lim: &DesignLimits,
    grid_ok: bool,
) -> Option<LongDelayGrid> {
    let mut g = LongDelayGrid::defaults(nominal.unwrap_or(50.0));
    let mut ok = true;
    let pp = p.key("pickup_hz");
    let dp = p.key("delay_s");
    if let Some(raw_p) = &raw.pickup_hz {
        for (key, value, slot) in [
            ("highest", raw_p.highest, &mut g.highest_pickup_hz),
            ("lowest", raw_p.lowest, &mut g.lowest_pickup_hz),
        ] {
            let Some(v) = value else {
                continue;
            };
            ok &= match nominal {
                Some(f0) => num(
                    r,
                    &pp.key(key),
                    v,
                    Lo::AtLeast(0.8 * f0),
                    Hi::Below(f0),
                    " Hz",
                ),
                None => num(r, &pp.key(key), v, Lo::Above(0.0), Hi::Any, " Hz"),
            };
            *slot = v;
        }
        if let Some(v) = raw_p.step {
            ok &= num(r, &pp.key("step"), v, Lo::Above(0.0), Hi::Any, " Hz");
            g.pickup_step_hz = v;
        }
    }
    if let Some(raw_d) = &raw.delay_s {
        for (key, value, slot) in [
            ("min", raw_d.min, &mut g.min_delay_s),
            ("max", raw_d.max, &mut g.max_delay_s),
        ] {
            if let Some(v) = value {
                ok &= delay(r, &dp.key(key), v);
                *slot = v;
            }
        }
        if let Some(v) = raw_d.step {
            ok &= time_constant(r, &dp.key("step"), v);
            g.delay_step_s = v;
        }
    }
    if !ok {
        return None;
    }
    let written = |r: &Reader, keys: &[FieldPath]| {
        let mut all = keys.to_vec();
        all.push(p.clone());
        first_written(r, &all)
    };
    if g.highest_pickup_hz + EPS < g.lowest_pickup_hz {
        r.error(
            &written(r, &[pp.key("highest"), pp.key("lowest")]),
            format!(
                "long_delay.pickup_hz.highest {} Hz is below long_delay.pickup_hz.lowest {} Hz",
                g.highest_pickup_hz, g.lowest_pickup_hz
            ),
            "write highest ≥ lowest; highest = lowest fixes the long-delay pickup".to_string(),
        );
        ok = false;
    }
    if g.min_delay_s > g.max_delay_s + EPS {
        r.error(
            &written(r, &[dp.key("min"), dp.key("max")]),
            format!(
                "long_delay.delay_s.min {} s is above long_delay.delay_s.max {} s",
                g.min_delay_s, g.max_delay_s
            ),
            "write min ≤ max; min = max fixes the long delay".to_string(),
        );
        ok = false;
    }
    if grid_ok && g.lowest_pickup_hz <= lim.highest_pickup_hz + EPS {
        r.error(
            &written(r, &[pp.key("lowest"), pp.clone()]),
            format!(
                "long_delay.pickup_hz.lowest {} Hz is not above pickup_hz.highest {} Hz, the \
                 ordinary stages' highest pickup",
                g.lowest_pickup_hz, lim.highest_pickup_hz
            ),
            "the long-delay stage picks up near the recovery level, above every ordinary stage: \
             raise long_delay.pickup_hz.lowest or lower pickup_hz.highest"
                .to_string(),
        );
        ok = false;
    }
    if grid_ok && g.min_delay_s <= lim.max_delay_s + EPS {
        r.error(
            &written(r, &[dp.key("min"), dp.clone()]),
            format!(
                "long_delay.delay_s.min {} s is not longer than delay_s.max {} s, the ordinary \
                 stages' longest delay",
                g.min_delay_s, lim.max_delay_s
            ),
            "a long-delay stage waits seconds, longer than any ordinary stage: raise \
             long_delay.delay_s.min"
                .to_string(),
        );
        ok = false;
    }
    if let Some(c) = criteria {
        if g.highest_pickup_hz > c.normal_low_hz + EPS {
            r.error(
                &written(r, &[pp.key("highest"), pp.clone()]),
                format!(
                    "long_delay.pickup_hz.highest {} Hz is above criteria.coordination.normal_low_hz {} Hz; a stage there could shed in normal operation",
                    g.highest_pickup_hz, c.normal_low_hz
                ),
                format!("lower it to {} Hz or less", c.normal_low_hz),
            );
            ok = false;
        }
        if g.max_delay_s + EPS >= c.recover_within_s {
            r.error(
                &written(r, &[dp.key("max"), dp.clone()]),
                format!(
                    "long_delay.delay_s.max {} s is not shorter than criteria.recover.within_s {} s; a stage that waits that long cannot bring frequency back in time",
                    g.max_delay_s, c.recover_within_s
                ),
                format!(
                    "write a delay_s.max below {} s, leaving the island time to recover after the stage opens",
                    c.recover_within_s
                ),
            );
            ok = false;
        }
    }
    let (pickups, delays) = g.grid_points();
    if pickups * delays > MAX_LONG_DELAY_POINTS {
        r.error(
            &written(r, &[pp.key("step"), dp.key("step")]),
            format!(
                "the long-delay grid has {} pickups × {} delays, above the {MAX_LONG_DELAY_POINTS} points the design tries",
                limits::count_text(pickups),
                limits::count_text(delays)
            ),
            "use coarser steps (long_delay.pickup_hz.step, long_delay.delay_s.step)".to_string(),
        );
        ok = false;
    }
    ok.then_some(g)
}

/// The breakers of a written `armed_by`, resolved as a scheme's `armed_by` is; `None` when the
/// block does not write it (the default stands).
pub(super) fn armed_by(
    r: &mut Reader,
    raw: Option<&RawDesign>,
    plant: &Plant,
) -> Option<Vec<BreakerRef>> {
    let ids = raw?.armed_by.as_ref()?;
    let p = FieldPath::root().key("design").key("armed_by");
    let breakers = breaker_list(plant);
    let mut out: Vec<BreakerRef> = Vec::new();
    for (k, id) in ids.iter().enumerate() {
        let ip = p.index(k);
        match what_is(plant, id) {
            Named::Breaker(b) if out.contains(&b) => r.error(
                &ip,
                format!("breaker `{id}` is listed twice in armed_by"),
                "list each breaker once".to_string(),
            ),
            Named::Breaker(b) => out.push(b),
            Named::Nothing if id == d::UTILITY_BREAKER_ID && plant.utility.is_none() => r.error(
                &ip,
                format!("armed_by names `{id}`, but the plant has no utility connection"),
                "remove it, or describe the utility connection under `utility`".to_string(),
            ),
            other => not_a_breaker(
                r,
                &ip,
                id,
                other,
                &breakers,
                "armed_by takes the utility breaker, a tie or a generator",
            ),
        }
    }
    Some(out)
}

/// The default of `armed_by`: every breaker whose opening a case can cause — the utility
/// breaker when the plant has one, every tie, and every generator breaker (a trip).
pub(super) fn every_breaker(plant: &Plant) -> Vec<BreakerRef> {
    let mut out = Vec::new();
    if plant.utility.is_some() {
        out.push(BreakerRef::Utility);
    }
    out.extend((0..plant.ties.len()).map(BreakerRef::Tie));
    out.extend((0..plant.generators.len()).map(BreakerRef::Generator));
    out
}

// ---------------------------------------------------------------- parts of the block

fn stage_count(
    r: &mut Reader,
    p: &FieldPath,
    raw: Option<&RawStageCount>,
    lim: &mut DesignLimits,
) -> bool {
    let Some(s) = raw else {
        return true;
    };
    let mut ok = true;
    for (key, value) in [("min", s.min), ("max", s.max)] {
        let Some(n) = value else {
            continue;
        };
        if n == 0 || n > MAX_STAGES {
            r.error(
                &p.key(key),
                format!("stages.{key} is {n}, expected 1 to {MAX_STAGES} under-frequency stages"),
                format!("allowed: 1 ≤ min ≤ max ≤ {MAX_STAGES}; armed stages are not counted"),
            );
            ok = false;
        }
    }
    lim.min_stages = s.min.map_or(lim.min_stages, |n| n as usize);
    lim.max_stages = s.max.map_or(lim.max_stages, |n| n as usize);
    if ok && lim.min_stages > lim.max_stages {
        r.error(
            &first_written(r, &[p.key("min"), p.key("max")]),
            format!(
                "stages.min {}{} is above stages.max {}{}",
                lim.min_stages,
                default_mark(s.min.is_none()),
                lim.max_stages,
                default_mark(s.max.is_none())
            ),
            format!("allowed: 1 ≤ min ≤ max ≤ {MAX_STAGES}; raise max or lower min"),
        );
        ok = false;
    }
    ok
}

/// Checks the pickup band's values and their order; `false` when any is wrong, so that the
/// comparisons with criteria and machines are skipped.
fn pickup_grid(
    r: &mut Reader,
    p: &FieldPath,
    raw: Option<&RawPickupGrid>,
    nominal: Option<f64>,
    lim: &mut DesignLimits,
) -> bool {
    let Some(g) = raw else {
        return true;
    };
    let mut ok = true;
    for (key, value, slot) in [
        ("highest", g.highest, &mut lim.highest_pickup_hz),
        ("lowest", g.lowest, &mut lim.lowest_pickup_hz),
    ] {
        let Some(v) = value else {
            continue;
        };
        ok &= match nominal {
            Some(f0) => num(
                r,
                &p.key(key),
                v,
                Lo::AtLeast(0.8 * f0),
                Hi::Below(f0),
                " Hz",
            ),
            None => num(r, &p.key(key), v, Lo::Above(0.0), Hi::Any, " Hz"),
        };
        *slot = v;
    }
    if let Some(v) = g.step {
        ok &= num(r, &p.key("step"), v, Lo::Above(0.0), Hi::Any, " Hz");
        lim.pickup_step_hz = v;
    }
    if ok && lim.highest_pickup_hz <= lim.lowest_pickup_hz {
        r.error(
            &first_written(r, &[p.key("highest"), p.key("lowest")]),
            format!(
                "pickup_hz.highest {} Hz{} is not above pickup_hz.lowest {} Hz{}",
                lim.highest_pickup_hz,
                default_mark(g.highest.is_none()),
                lim.lowest_pickup_hz,
                default_mark(g.lowest.is_none())
            ),
            "highest is the first stage's pickup and lowest the last's: write highest > lowest"
                .to_string(),
        );
        ok = false;
    }
    ok
}

/// Checks the delay grid's values and their order; `false` when any is wrong.
fn delay_grid(
    r: &mut Reader,
    p: &FieldPath,
    raw: Option<&RawDelayGrid>,
    lim: &mut DesignLimits,
) -> bool {
    let Some(g) = raw else {
        return true;
    };
    let mut ok = true;
    for (key, value, slot) in [
        ("min", g.min, &mut lim.min_delay_s),
        ("max", g.max, &mut lim.max_delay_s),
    ] {
        if let Some(v) = value {
            ok &= delay(r, &p.key(key), v);
            *slot = v;
        }
    }
    if let Some(v) = g.step {
        ok &= time_constant(r, &p.key("step"), v);
        lim.delay_step_s = v;
    }
    if ok && lim.min_delay_s > lim.max_delay_s {
        r.error(
            &first_written(r, &[p.key("min"), p.key("max")]),
            format!(
                "delay_s.min {} s{} is above delay_s.max {} s{}",
                lim.min_delay_s,
                default_mark(g.min.is_none()),
                lim.max_delay_s,
                default_mark(g.max.is_none())
            ),
            "write min ≤ max; min = max fixes every proposed delay".to_string(),
        );
        ok = false;
    }
    ok
}

/// The grid's points (pickups × delays) against the limit `max_design_grid_points`: the settings
/// search's time and memory grow with them, and a tiny step would make a grid of terabytes.
fn grid_size(r: &mut Reader, p: &FieldPath, lim: &DesignLimits) {
    let limit = limits::DESIGN_GRID_POINTS;
    let (pickups, delays) = lim.grid_points();
    let total = pickups * delays;
    if total <= r.limits.get(limit) as f64 {
        return;
    }
    let raise = if total <= GRID_POINTS_CEILING {
        format!(
            "; to search this grid, raise the limit by setting the environment variable {}={} \
             (or higher)",
            limit.env,
            limits::count_text(total)
        )
    } else {
        format!(
            "; the environment variable {} raises the limit, but no value allows more than {} \
             grid points",
            limit.env,
            limits::count_text(GRID_POINTS_CEILING)
        )
    };
    r.error(
        &first_written(
            r,
            &[
                p.key("pickup_hz").key("step"),
                p.key("delay_s").key("step"),
                p.key("pickup_hz"),
                p.key("delay_s"),
            ],
        ),
        format!(
            "the design grid has {} pickups × {} delays = {} {}, above the limit {} = {}",
            limits::count_text(pickups),
            limits::count_text(delays),
            limits::count_text(total),
            limit.noun,
            limit.name,
            r.limits.get(limit)
        ),
        format!(
            "use coarser steps (design.pickup_hz.step, design.delay_s.step){raise}; see \
             docs/guarantees.md, section limits"
        ),
    );
}

/// The pickup band against the criteria: at or below the normal band's lower edge, above the
/// minimum frequency, and wide enough for the most stages at the coordination spacing. `true`
/// when the lowest pickup is above the minimum frequency.
fn against_criteria(
    r: &mut Reader,
    p: &FieldPath,
    lim: &DesignLimits,
    c: &Criteria,
    stages_ok: bool,
) -> bool {
    let band = p.key("pickup_hz");
    let coordination = FieldPath::root().key("criteria").key("coordination");
    let (highest, lowest, step) = (
        lim.highest_pickup_hz,
        lim.lowest_pickup_hz,
        lim.pickup_step_hz,
    );
    let high_ok = highest <= c.normal_low_hz + EPS;
    let low_ok = lowest > c.min_hz + EPS;
    if !high_ok {
        r.error(
            &first_written(
                r,
                &[
                    band.key("highest"),
                    coordination.key("normal_low_hz"),
                    band.clone(),
                ],
            ),
            format!(
                "pickup_hz.highest {highest} Hz is above criteria.coordination.normal_low_hz {} Hz; a stage there could shed in normal operation",
                c.normal_low_hz
            ),
            format!(
                "lower pickup_hz.highest to {} Hz or less (the audit refuses any pickup above normal_low_hz)",
                c.normal_low_hz
            ),
        );
    }
    if !low_ok {
        r.error(
            &first_written(
                r,
                &[
                    band.key("lowest"),
                    FieldPath::root().key("criteria").key("min_hz"),
                    band.clone(),
                ],
            ),
            format!(
                "pickup_hz.lowest {lowest} Hz is not above criteria.min_hz {} Hz; the last stage must act before frequency falls to the minimum",
                c.min_hz
            ),
            format!("raise pickup_hz.lowest above {} Hz", c.min_hz),
        );
    }
    if !(high_ok && low_ok && stages_ok) {
        return low_ok;
    }
    let (fit, spacing) = stages_that_fit(highest, lowest, step, c.min_spacing_hz);
    if lim.max_stages > fit {
        let at_spacing = if (spacing - c.min_spacing_hz).abs() <= EPS {
            format!("{} Hz spacing", round6(spacing))
        } else {
            format!(
                "{} Hz spacing (min_spacing_hz {} Hz on the {step} Hz grid)",
                round6(spacing),
                c.min_spacing_hz
            )
        };
        r.error(
            &first_written(
                r,
                &[
                    p.key("stages").key("max"),
                    band.key("lowest"),
                    band.key("highest"),
                    band.clone(),
                    coordination.key("min_spacing_hz"),
                ],
            ),
            format!(
                "{} stages at {at_spacing} need {} Hz between highest and lowest; highest {highest} Hz and lowest {lowest} Hz are {} Hz apart, room for {fit}",
                lim.max_stages,
                round6((lim.max_stages - 1) as f64 * spacing),
                round6(highest - lowest),
            ),
            if fit >= lim.min_stages {
                format!("widen the band (pickup_hz.highest, pickup_hz.lowest) or lower stages.max to {fit}")
            } else {
                format!("widen the band (pickup_hz.highest, pickup_hz.lowest); not even stages.min {} fits", lim.min_stages)
            },
        );
    }
    true
}

/// The lowest pickup must be above every machine's own under-frequency trip, as a scheme's
/// pickups must be: otherwise a proposed table would be refused by the scheme check.
fn above_generator_trips(
    r: &mut Reader,
    p: &FieldPath,
    lim: &DesignLimits,
    generators: &[Option<Generator>],
) {
    let lowest = lim.lowest_pickup_hz;
    let worst = generators
        .iter()
        .enumerate()
        .filter_map(|(g, gen)| gen.as_ref().map(|gen| (g, gen)))
        .flat_map(|(g, gen)| {
            gen.trips
                .iter()
                .enumerate()
                .filter_map(move |(t, trip)| match trip {
                    FrequencyTrip::Under { hz, after_s } if *hz >= lowest => {
                        Some((g, gen, t, *hz, *after_s))
                    }
                    _ => None,
                })
        })
        .max_by(|a, b| a.3.total_cmp(&b.3));
    if let Some((g, gen, t, hz, after_s)) = worst {
        let band = p.key("pickup_hz");
        r.error(
            &first_written(r, &[band.key("lowest"), band.clone()]),
            format!(
                "pickup_hz.lowest {lowest} Hz is at or below generator `{}`'s own under-frequency trip (generators[{g}].trips[{t}]: below {hz} Hz after {after_s} s); the machine would trip before the last stage sheds",
                gen.id
            ),
            format!("raise pickup_hz.lowest above {hz} Hz, or check the machine's protection setting"),
        );
    }
}

// ---------------------------------------------------------------- helpers

/// How many stages fit on the pickup grid from `highest` down to `lowest` in steps of `step`,
/// with pickups at least `min_spacing_hz` apart, and the spacing that takes on the grid.
/// Proposed stages take distinct grid points, so the spacing is a whole number of steps (at least
/// one) and may be wider than `min_spacing_hz` when the step does not divide it.
fn stages_that_fit(highest: f64, lowest: f64, step: f64, min_spacing_hz: f64) -> (usize, f64) {
    let per_stage = (min_spacing_hz / step - EPS).ceil().max(1.0);
    let points = ((highest - lowest) / step + EPS).floor() + 1.0;
    let fit = ((points - 1.0) / per_stage).floor() as usize + 1;
    (fit, per_stage * step)
}

/// The first of `paths` written in the file, else the `design` block itself: a clash between a
/// written value and a default is reported where something was written.
fn first_written(r: &Reader, paths: &[FieldPath]) -> FieldPath {
    paths
        .iter()
        .find(|p| r.is_written(p))
        .cloned()
        .unwrap_or_else(|| FieldPath::root().key("design"))
}

fn default_mark(is_default: bool) -> &'static str {
    if is_default {
        " (the default)"
    } else {
        ""
    }
}

/// A computed value for a message, without binary noise (0.5, not 0.49999999999999994).
fn round6(v: f64) -> f64 {
    (v * 1e6).round() / 1e6
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Counting grid points by hand (internal arithmetic, no outside reference).
    #[test]
    fn stages_that_fit_counts_grid_points_at_the_spacing() {
        // 49.0 … 48.0 in 0.1 Hz steps: 11 points; 0.1 Hz apart, all 11 may be stages.
        let (fit, spacing) = stages_that_fit(49.0, 48.0, 0.1, 0.1);
        assert_eq!(fit, 11);
        assert!((spacing - 0.1).abs() < 1e-12);
        // 0.25 Hz apart on a 0.1 Hz grid: every third point (0.3 Hz), 49.0, 48.7, 48.4, 48.1.
        let (fit, spacing) = stages_that_fit(49.0, 48.0, 0.1, 0.25);
        assert_eq!(fit, 4);
        assert!((spacing - 0.3).abs() < 1e-12);
        // A step wider than the spacing: the step is the spacing; 49.0, 48.85, …, 48.1 (7 points).
        assert_eq!(stages_that_fit(49.0, 48.0, 0.15, 0.1).0, 7);
        // No spacing asked for: still one stage per grid point.
        assert_eq!(stages_that_fit(49.0, 48.5, 0.1, 0.0).0, 6);
        // A band narrower than one step holds one stage.
        assert_eq!(stages_that_fit(49.0, 48.95, 0.1, 0.1).0, 1);
    }
}
