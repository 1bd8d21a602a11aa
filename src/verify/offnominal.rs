//! Off-nominal frequency time: how long each running generator spends in each abnormal frequency
//! band during a run, against the time the machine may spend there.
//!
//! Default bands for a machine that declares none follow the frequency ranges for generating
//! modules of Regulation (EU) 2016/631 (requirements for generators), Art. 13(1)(a), Table 2, for
//! Continental Europe (from memory, to be confirmed against the Official Journal): 49.0–51.0 Hz
//! unlimited; 48.5–49.0 Hz and 47.5–48.5 Hz at least 30 min; 51.0–51.5 Hz 30 min. Outside
//! 47.5–51.5 Hz the regulation requires no withstand, so the default allows no time there. For a
//! 60 Hz plant the same bands are scaled by f0/50, which is a derivation, not a published table;
//! steam-turbine limits after IEEE C37.106 are the manufacturer's curve and must be declared.
//! Times are accumulated from the run's samples (resolution: the sample interval).

use crate::model::{OffFrequencyLimit, Plant};
use crate::sim::{EventKind, Run};
use serde::Serialize;

/// Time a machine may spend with frequency in [low_hz, high_hz).
pub type Band = OffFrequencyLimit;

/// The default abnormal bands (see the module doc for their source).
pub fn default_bands(nominal_hz: f64) -> Vec<Band> {
    let k = nominal_hz / 50.0;
    vec![
        Band {
            low_hz: 0.0,
            high_hz: 47.5 * k,
            max_s: 0.0,
        },
        Band {
            low_hz: 47.5 * k,
            high_hz: 48.5 * k,
            max_s: 1800.0,
        },
        Band {
            low_hz: 48.5 * k,
            high_hz: 49.0 * k,
            max_s: 1800.0,
        },
        Band {
            low_hz: 51.0 * k,
            high_hz: 51.5 * k,
            max_s: 1800.0,
        },
        Band {
            low_hz: 51.5 * k,
            high_hz: f64::INFINITY,
            max_s: 0.0,
        },
    ]
}

/// One generator's time in one band.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BandTime {
    pub generator: String,
    pub band: Band,
    pub time_s: f64,
}

impl BandTime {
    /// More time in the band than the machine may spend there.
    pub fn exceeded(&self) -> bool {
        self.time_s > self.band.max_s + 1e-9
    }
}

/// Time each generator running at `op` spent in each of its declared bands (or the defaults),
/// while connected; bands with no time are left out. Read on the sample grid from the run's
/// trajectory ([`crate::sim::Trajectory::grid_time_in_band`]: the dense output is evaluated only
/// where a band edge lies between two knots, and a band no knot of the section reaches costs
/// nothing).
pub fn band_times(plant: &Plant, op: usize, run: &Run) -> Vec<BandTime> {
    let defaults = default_bands(plant.nominal_hz);
    let path = &run.trajectory;
    let mut out = Vec::new();
    for (g, gen) in plant.generators.iter().enumerate() {
        if !plant.operating_points[op].online[g] {
            continue;
        }
        let tripped_at = run
            .events
            .iter()
            .find(|e| matches!(&e.what, EventKind::GeneratorTripped { generator, .. } if *generator == gen.id))
            .map(|e| e.at_s)
            .unwrap_or(f64::INFINITY);
        let bands = if gen.off_frequency_limits.is_empty() {
            &defaults
        } else {
            &gen.off_frequency_limits
        };
        for band in bands {
            let time_s = path.grid_time_in_band(gen.section, band.low_hz, band.high_hz, tripped_at);
            if time_s > 0.0 {
                out.push(BandTime {
                    generator: gen.id.clone(),
                    band: *band,
                    time_s,
                });
            }
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn default_bands_cover_the_regulation_ranges_in_order() {
        let b = default_bands(50.0);
        assert_eq!(b.len(), 5);
        assert!(b.windows(2).all(|w| w[0].high_hz <= w[1].low_hz));
        assert_eq!(
            (b[1].low_hz, b[1].high_hz, b[1].max_s),
            (47.5, 48.5, 1800.0)
        );
        let b60 = default_bands(60.0);
        assert!((b60[1].low_hz - 57.0).abs() < 1e-9);
    }
}
