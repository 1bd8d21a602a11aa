//! The end of a run: island summaries, the worst nadir, peak, recovery and ROCOF, and the trace,
//! gathered into a [`Run`] with the run's trajectory (and the sampled trace when asked for).

use super::Engine;
use crate::sim::{IslandEnd, IslandSummary, Run, StopReason};

impl Engine<'_> {
    pub(super) fn finish(self) -> Run {
        let t_end = self.t;
        let rec = &self.rec;
        let (disturbance_s, _) = self.case.disturbance_span();
        let window = self.cfg.rocof_window_s.max(rec.sample_interval_s);
        let mut samples = rec.samples(t_end);
        let mut islands = Vec::with_capacity(self.records.len());
        for (r, isl) in self.records.iter().enumerate() {
            let to = isl.to_s.unwrap_or(t_end);
            let s0 = isl.sections[0];
            let within: Vec<(f64, f64)> = rec.candidates[s0]
                .iter()
                .copied()
                .filter(|(t, _)| *t >= isl.from_s - 1e-12 && *t <= to + 1e-12)
                .collect();
            let mut nadir = (isl.from_s, f64::INFINITY);
            for &(t, f) in &within {
                if f < nadir.1 {
                    nadir = (t, f);
                }
            }
            let final_hz = within.last().map_or(self.f0, |c| c.1);
            if within.is_empty() {
                nadir.1 = final_hz;
            }
            let peak = rec.peak_after(s0, disturbance_s, isl.from_s, to);
            islands.push(IslandSummary {
                index: r,
                sections: isl
                    .sections
                    .iter()
                    .map(|s| self.plant.sections[*s].id.clone())
                    .collect(),
                on_utility: isl.on_utility,
                from_s: isl.from_s,
                to_s: to,
                nadir_hz: nadir.1,
                nadir_at_s: nadir.0,
                peak_hz: peak.map(|p| p.1),
                peak_at_s: peak.map(|p| p.0),
                final_hz,
                max_rocof_hz_per_s: samples.windowed_rocof(s0, window, isl.from_s, to),
                shed_mw: isl.shed_mw,
                dropped_mw: isl.dropped_mw,
                end: isl.end,
            });
        }
        let worst = islands
            .iter()
            .enumerate()
            .min_by(|a, b| a.1.nadir_hz.total_cmp(&b.1.nadir_hz).then(a.0.cmp(&b.0)))
            .map(|(i, _)| i);
        let (nadir_hz, nadir_at_s, nadir_section) = worst
            .map(|i| {
                (
                    islands[i].nadir_hz,
                    islands[i].nadir_at_s,
                    self.records[i].sections[0],
                )
            })
            .unwrap_or((self.f0, 0.0, 0));
        let peak = islands
            .iter()
            .filter_map(|i| Some((i.peak_at_s?, i.peak_hz?)))
            .fold(None, |best: Option<(f64, f64)>, p| match best {
                Some(b) if b.1 >= p.1 => Some(b),
                _ => Some(p),
            });
        let alive: Vec<usize> = self
            .records
            .iter()
            .enumerate()
            .filter(|(_, r)| r.end == IslandEnd::Running)
            .map(|(i, _)| i)
            .collect();
        let final_hz = alive
            .iter()
            .map(|i| islands[*i].final_hz)
            .reduce(f64::min)
            .unwrap_or_else(|| {
                rec.candidates
                    .get(nadir_section)
                    .and_then(|c| c.last())
                    .map_or(self.f0, |c| c.1)
            });
        let alive_sections: Vec<usize> = alive
            .iter()
            .flat_map(|i| self.records[*i].sections.clone())
            .collect();
        let recovered_above_at_s =
            if alive_sections.iter().any(|s| rec.ends_below(*s)) || alive_sections.is_empty() {
                None
            } else {
                // The last upward crossing of any section; a run that never went below the
                // level has recovered from the start.
                Some(
                    alive_sections
                        .iter()
                        .filter_map(|s| rec.last_up_s[*s])
                        .fold(0.0, f64::max),
                )
            };
        let max_rocof_hz_per_s = (0..self.eq.n_sections)
            .map(|s| samples.windowed_rocof(s, window, f64::NEG_INFINITY, t_end))
            .fold(0.0, f64::max);
        let stop = self
            .fault
            .clone()
            .or_else(|| self.first_failure.clone())
            .unwrap_or(StopReason::EndTime);
        let went_below_recover_level = rec.went_below();
        drop(samples);
        let trajectory = self.rec.into_trajectory(t_end);
        let trace = self.cfg.record_trace.then(|| trajectory.trace());
        Run {
            stop,
            islands,
            nadir_hz,
            nadir_at_s,
            peak_hz: peak.map(|p| p.1),
            peak_at_s: peak.map(|p| p.0),
            went_below_recover_level,
            max_rocof_hz_per_s,
            final_hz,
            recovered_above_at_s,
            events: self.events,
            shed_mw: self.shed_mw,
            dropped_mw: self.dropped_mw,
            trace,
            trajectory,
        }
    }
}
