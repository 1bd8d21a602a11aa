//! The closed forms of screening: the initial ROCOF from the swing equation at t = 0+ and the
//! steady state with droop, isochronous units and load damping (sources in the parent module doc).

use super::{GovernorUnit, SteadyState, UnitResponse, COLLAPSE_FLOOR_PU};

/// Initial rate of change of frequency, Hz/s, for a shortage `deficit_mw` on stored energy
/// `stored_energy_mws` (Σ H·S): `−ΔP·f0 / (2·E_k)`. `None` without stored energy.
pub fn initial_rocof_hz_per_s(
    deficit_mw: f64,
    stored_energy_mws: f64,
    nominal_hz: f64,
) -> Option<f64> {
    if stored_energy_mws > 0.0 {
        Some(-deficit_mw * nominal_hz / (2.0 * stored_energy_mws))
    } else {
        None
    }
}

/// Steady state of an island off the utility after a shortage `deficit_mw` (negative: surplus),
/// with load damping `damping_mw_per_pu` and the governed machines `units`.
pub fn steady_state(
    units: &[GovernorUnit],
    damping_mw_per_pu: f64,
    deficit_mw: f64,
    nominal_hz: f64,
) -> SteadyState {
    let floor_hz = COLLAPSE_FLOOR_PU * nominal_hz;
    let max_dev_pu = 1.0 - COLLAPSE_FLOOR_PU;
    // Solve for a surplus as a mirrored shortage: x is the speed deviation in the direction the
    // imbalance drives it, so x ≥ 0 always.
    let sign = if deficit_mw < 0.0 { -1.0 } else { 1.0 };
    let need = deficit_mw.abs();
    let room = |u: &GovernorUnit| {
        if sign > 0.0 {
            u.raise_mw.max(0.0)
        } else {
            u.lower_mw.max(0.0)
        }
    };
    let mut response = vec![0.0; units.len()];
    let mut remaining = need;
    let mut isochronous = None;
    for (i, u) in units.iter().enumerate() {
        if u.isochronous && remaining > 0.0 {
            let take = remaining.min(room(u));
            response[i] = take;
            remaining -= take;
            isochronous = Some(u.id.clone());
        }
    }
    let droop: Vec<usize> = (0..units.len())
        .filter(|&i| !units[i].isochronous && units[i].gain_mw_per_pu > 0.0)
        .collect();
    let droop_at = |i: usize, x: f64| {
        let u = &units[i];
        (u.gain_mw_per_pu * (x - u.deadband_pu).max(0.0)).min(room(u))
    };
    let total_at = |x: f64| -> f64 {
        droop.iter().map(|&i| droop_at(i, x)).sum::<f64>() + damping_mw_per_pu.max(0.0) * x
    };
    let x = if remaining <= 0.0 {
        0.0
    } else {
        if total_at(max_dev_pu) < remaining {
            let iso_room: f64 = units.iter().filter(|u| u.isochronous).map(room).sum();
            let available_mw = total_at(max_dev_pu) + iso_room;
            return if sign > 0.0 {
                SteadyState::NotHeld {
                    floor_hz,
                    available_mw,
                }
            } else {
                SteadyState::RisesPast {
                    ceiling_hz: (2.0 - COLLAPSE_FLOOR_PU) * nominal_hz,
                    available_mw,
                }
            };
        }
        isochronous = None;
        // g(x) is continuous, non-decreasing and linear between these breakpoints.
        let mut points: Vec<f64> = vec![0.0, max_dev_pu];
        for &i in &droop {
            let u = &units[i];
            for p in [u.deadband_pu, u.deadband_pu + room(u) / u.gain_mw_per_pu] {
                if p > 0.0 && p < max_dev_pu {
                    points.push(p);
                }
            }
        }
        points.sort_by(f64::total_cmp);
        let mut x = max_dev_pu;
        for w in points.windows(2) {
            let (a, b) = (w[0], w[1]);
            let (ga, gb) = (total_at(a), total_at(b));
            if gb >= remaining {
                x = if gb > ga {
                    a + (remaining - ga) * (b - a) / (gb - ga)
                } else {
                    a
                };
                break;
            }
        }
        x
    };
    for &i in &droop {
        response[i] = droop_at(i, x);
    }
    let at_limit = units
        .iter()
        .zip(&response)
        .filter(|(u, r)| (u.gain_mw_per_pu > 0.0 || u.isochronous) && **r >= room(u) - 1e-9)
        .map(|(u, _)| u.id.clone())
        .collect();
    let delta_hz = -sign * x * nominal_hz;
    SteadyState::Held {
        hz: nominal_hz + delta_hz,
        delta_hz,
        governor_mw: sign * response.iter().sum::<f64>(),
        load_relief_mw: sign * damping_mw_per_pu.max(0.0) * x,
        isochronous,
        at_limit,
        responses: units
            .iter()
            .zip(&response)
            .map(|(u, r)| UnitResponse {
                generator: u.id.clone(),
                mw: sign * r,
            })
            .collect(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn unit(id: &str, gain: f64, raise: f64) -> GovernorUnit {
        GovernorUnit {
            id: id.into(),
            gain_mw_per_pu: gain,
            deadband_pu: 0.0,
            raise_mw: raise,
            lower_mw: raise,
            isochronous: false,
        }
    }

    #[test]
    fn clamped_unit_leaves_the_rest_to_the_others() {
        // 10 MW short; unit a (gain 1000) can give only 2 MW, unit b (gain 1000) is free,
        // D = 0: a clamps at 2, b gives 8 at x = 0.008 pu.
        let s = steady_state(
            &[unit("a", 1000.0, 2.0), unit("b", 1000.0, 50.0)],
            0.0,
            10.0,
            50.0,
        );
        let SteadyState::Held {
            delta_hz,
            responses,
            at_limit,
            ..
        } = s
        else {
            panic!("held expected");
        };
        assert!((delta_hz + 0.4).abs() < 1e-9);
        assert!((responses[0].mw - 2.0).abs() < 1e-9);
        assert!((responses[1].mw - 8.0).abs() < 1e-9);
        assert_eq!(at_limit, vec!["a".to_string()]);
    }

    #[test]
    fn no_headroom_and_no_damping_is_not_held() {
        let s = steady_state(&[unit("a", 1000.0, 2.0)], 0.0, 3.0, 50.0);
        assert!(
            matches!(s, SteadyState::NotHeld { available_mw, .. } if (available_mw - 2.0).abs() < 1e-9)
        );
    }

    #[test]
    fn isochronous_unit_restores_nominal_within_its_headroom() {
        let mut iso = unit("iso", 0.0, 5.0);
        iso.isochronous = true;
        let s = steady_state(&[iso, unit("b", 100.0, 5.0)], 10.0, 4.0, 60.0);
        assert!(
            matches!(s, SteadyState::Held { hz, ref isochronous, .. } if hz == 60.0 && isochronous.as_deref() == Some("iso"))
        );
    }

    #[test]
    fn deadband_offsets_the_response() {
        // Gain 100 MW/pu, dead band 0.001 pu, 1 MW short, no damping: x = 0.001 + 0.01.
        let mut u = unit("a", 100.0, 10.0);
        u.deadband_pu = 0.001;
        let SteadyState::Held { delta_hz, .. } = steady_state(&[u], 0.0, 1.0, 50.0) else {
            panic!("held expected");
        };
        assert!((delta_hz + 0.011 * 50.0).abs() < 1e-9);
    }

    /// A surplus larger than the lowering room and load relief at the over-speed level rises past
    /// it, named as a rise (the mirror of the collapse floor), not as a floor it falls below.
    #[test]
    fn surplus_beyond_reach_rises_past_the_ceiling() {
        // One droop machine, gain 100 MW/pu, lowering room 5 MW; 20 MW of surplus, no load
        // relief: 5 MW taken up at most, so frequency rises past 1.15 × 50 = 57.5 Hz.
        let mut u = unit("a", 100.0, 10.0);
        u.lower_mw = 5.0;
        match steady_state(&[u], 0.0, -20.0, 50.0) {
            SteadyState::RisesPast {
                ceiling_hz,
                available_mw,
            } => {
                assert!((ceiling_hz - 57.5).abs() < 1e-12);
                assert!((available_mw - 5.0).abs() < 1e-9);
            }
            other => panic!("rises past expected, got {other:?}"),
        }
    }

    #[test]
    fn surplus_raises_frequency() {
        let SteadyState::Held { delta_hz, .. } =
            steady_state(&[unit("a", 100.0, 10.0)], 0.0, -1.0, 50.0)
        else {
            panic!("held expected");
        };
        assert!((delta_hz - 0.5).abs() < 1e-9);
    }
}
