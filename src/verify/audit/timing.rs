//! Which stage opens its loads first, on any fall: the part of the rank-order rule that the
//! order by pickup alone cannot see.
//!
//! The walk of [`super::rank`] takes the stages that can operate in an event by falling pickup.
//! That is the order in which they pick up, not always the order in which they open their
//! breakers: a stage with a high pickup and a long delay (a long-delay stage for a frequency that
//! hangs below the recovery level, say) is overtaken on a fast fall by a lower stage with a short
//! delay, which times out first; and once that lower stage has shed, frequency may recover above
//! the slower stage's pickup, so that it never operates at all. This module finds, for each stage
//! `b` in the walk, the earlier stages that are **not** sure to have opened their loads when `b`
//! opens its own, and the lower-ranked loads that only such stages would have opened.
//!
//! When is a stage `a` sure to open its loads no later than `b`? Stage `a` comes before `b` in the
//! walk: it is armed by a breaker of the event (its timer starts at the event) while `b` is a
//! frequency stage or armed with no shorter delay, or both are frequency stages and `a`'s pickup
//! is at least `b`'s. Whenever `b`'s timer runs, frequency is below `b`'s pickup, so below `a`'s,
//! and `a`'s timer has been running since no later than `b`'s started. So `a`'s timer expires no
//! later than `b`'s when `a`'s delay is at most `b`'s, and its breaker opens no later when, in
//! addition, its delay plus breaker time is at most `b`'s: that is [`never_after`]. Otherwise a
//! fall fast enough (the times to cross the pickups taken to zero) lets `b` open first, and
//! nothing without a simulation bounds how fast a fall can be, so the audit counts it. The
//! measurement lag is the same for every stage of a table and changes neither comparison.
//!
//! A df/dt-supervised stage is taken to operate whenever it picks up, as in the walk; the note on
//! a slower fall that it lets pass stays with [`super::rank`].

use crate::model::Stage;

/// Whether stage `a`, which picks up no later than `b` in every fall that operates `b` (armed by
/// the event's breaker, or a frequency stage with a pickup at least `b`'s), is sure to have
/// opened its loads by the time `b` opens its own: its delay is no longer than `b`'s, and its
/// delay plus breaker time no longer either (module doc).
pub fn never_after(a: &Stage, b: &Stage) -> bool {
    a.delay_s <= b.delay_s && a.delay_s + a.breaker_s <= b.delay_s + b.breaker_s
}

/// One stage that may open loads before slower earlier stages open lower-ranked ones.
#[derive(Debug, Clone, PartialEq)]
pub struct Overtaken {
    /// The stage that opens first (index in the scheme).
    pub stage: usize,
    /// Loads it opens while lower-ranked ones are still connected.
    pub opened: Vec<usize>,
    /// Those lower-ranked loads: listed only by the slower stages before it in the walk.
    pub left_on: Vec<usize>,
    /// The slower stages that list the loads left connected.
    pub slower: Vec<usize>,
}

/// For one island at one event: each stage of `groups` (the walk, in pickup order, each group
/// acting together) that a fast fall lets open a load while a lower-ranked load of the island,
/// which only a slower stage earlier in the walk opens, is still connected.
///
/// `opens(s)` gives what stage `s` opens at the event; `connected[l]` says whether load `l` is a
/// sheddable load of this island that some stage lists, switched on and not yet opened by an
/// earlier event; `rank` gives every load's rank. `mark` is scratch space of one entry per load,
/// all `false` on entry and on return.
///
/// Cost: nothing beyond the pairwise comparison of stages unless some stage has a slower stage
/// before it; then O(loads those stages list) for that stage.
pub fn overtaken<'a>(
    stages: &[Stage],
    groups: &[Vec<usize>],
    opens: &dyn Fn(usize) -> &'a [usize],
    connected: &[bool],
    rank: &[u32],
    mark: &mut [bool],
) -> Vec<Overtaken> {
    let mut out = Vec::new();
    for (j, group) in groups.iter().enumerate() {
        for &b in group {
            let before = || groups[..=j].iter().flatten().copied().filter(|&a| a != b);
            let slower: Vec<usize> = before()
                .filter(|&a| !never_after(&stages[a], &stages[b]))
                .collect();
            if slower.is_empty() {
                continue;
            }
            // Loads sure to be open when b opens its own: those of the stages that never act
            // after it; then b's own.
            let mut touched: Vec<usize> = Vec::new();
            let mut close = |l: usize, mark: &mut [bool]| {
                if connected[l] && !mark[l] {
                    mark[l] = true;
                    touched.push(l);
                    true
                } else {
                    false
                }
            };
            for a in before().filter(|a| !slower.contains(a)) {
                for &l in opens(a) {
                    close(l, mark);
                }
            }
            let opened_by_b: Vec<usize> = opens(b)
                .iter()
                .copied()
                .filter(|&l| close(l, mark))
                .collect();
            let mut left_on: Vec<(usize, usize)> = Vec::new();
            for &a in &slower {
                for &l in opens(a) {
                    if connected[l] && !mark[l] {
                        left_on.push((l, a));
                    }
                }
            }
            for l in touched {
                mark[l] = false;
            }
            let Some(lowest) = left_on.iter().map(|&(l, _)| rank[l]).min() else {
                continue;
            };
            let Some(highest) = opened_by_b.iter().map(|&l| rank[l]).max() else {
                continue;
            };
            if lowest >= highest {
                continue;
            }
            let mut opened: Vec<usize> = opened_by_b
                .into_iter()
                .filter(|&l| rank[l] > lowest)
                .collect();
            left_on.retain(|&(l, _)| rank[l] < highest);
            let mut names: Vec<usize> = left_on.iter().map(|&(_, a)| a).collect();
            let mut left: Vec<usize> = left_on.into_iter().map(|(l, _)| l).collect();
            for v in [&mut opened, &mut left, &mut names] {
                v.sort_unstable();
                v.dedup();
            }
            out.push(Overtaken {
                stage: b,
                opened,
                left_on: left,
                slower: names,
            });
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::{Sizing, StageTrigger};

    fn stage(pickup_hz: f64, delay_s: f64, breaker_s: f64, sheds: Vec<usize>) -> Stage {
        Stage {
            id: format!("{pickup_hz}"),
            trigger: StageTrigger::Frequency {
                pickup_hz,
                min_rocof_hz_per_s: None,
            },
            delay_s,
            breaker_s,
            sheds,
            sizing: Sizing::All,
            in_service: true,
            groups: Vec::new(),
        }
    }

    /// A stage whose timer and breaker are no slower is never overtaken; a longer delay, or an
    /// equal delay with a slower breaker, is (the relay sequence of module doc: trip command at
    /// pickup time plus delay, loads open a breaker time later).
    #[test]
    fn a_stage_opens_no_later_only_when_both_its_delay_and_its_breaker_are_no_slower() {
        let b = stage(49.0, 0.2, 0.08, vec![]);
        assert!(never_after(&stage(49.2, 0.2, 0.08, vec![]), &b));
        assert!(never_after(&stage(49.2, 0.1, 0.15, vec![]), &b));
        assert!(!never_after(&stage(49.2, 5.0, 0.08, vec![]), &b));
        assert!(!never_after(&stage(49.2, 0.2, 0.1, vec![]), &b));
        assert!(!never_after(&stage(49.2, 0.1, 0.2, vec![]), &b));
    }

    /// Ranks 1–2 in a 5 s stage at 49.4 Hz, ranks 3–4 in a 0.2 s stage at 49.0 Hz: the fast stage
    /// opens ranks 3–4 first on a fast fall. Listing ranks 1–2 in the fast stage too puts it right.
    #[test]
    fn a_fast_lower_stage_overtakes_a_long_delay_stage_unless_it_lists_its_loads() {
        let rank = [1, 2, 3, 4];
        let connected = [true; 4];
        let mut mark = [false; 4];
        let stages = vec![
            stage(49.4, 5.0, 0.08, vec![0, 1]),
            stage(49.0, 0.2, 0.08, vec![2, 3]),
        ];
        let groups = vec![vec![0], vec![1]];
        let opens = |s: usize| stages[s].sheds.as_slice();
        let found = overtaken(&stages, &groups, &opens, &connected, &rank, &mut mark);
        assert_eq!(
            found,
            vec![Overtaken {
                stage: 1,
                opened: vec![2, 3],
                left_on: vec![0, 1],
                slower: vec![0],
            }]
        );
        assert_eq!(mark, [false; 4]);
        let listed = vec![
            stage(49.4, 5.0, 0.08, vec![0, 1]),
            stage(49.0, 0.2, 0.08, vec![2, 3, 0, 1]),
        ];
        let opens = |s: usize| listed[s].sheds.as_slice();
        assert!(overtaken(&listed, &groups, &opens, &connected, &rank, &mut mark).is_empty());
        // Delays lengthening down the table: nothing overtakes.
        let lengthening = vec![
            stage(49.4, 0.1, 0.08, vec![0, 1]),
            stage(49.0, 0.2, 0.08, vec![2, 3]),
        ];
        let opens = |s: usize| lengthening[s].sheds.as_slice();
        assert!(overtaken(&lengthening, &groups, &opens, &connected, &rank, &mut mark).is_empty());
    }

    /// An armed stage counts like any other: armed by the event, its timer starts at the event,
    /// so a frequency stage with a shorter delay can still open first on a fast fall; with no
    /// longer a delay than the frequency stage it never does.
    #[test]
    fn an_armed_stage_with_a_longer_delay_is_overtaken_too() {
        use crate::model::BreakerRef;
        let rank = [1, 2, 3];
        let connected = [true; 3];
        let mut mark = [false; 3];
        let armed = |delay_s| Stage {
            trigger: StageTrigger::Breaker(BreakerRef::Utility),
            ..stage(0.0, delay_s, 0.08, vec![0])
        };
        let slow = vec![armed(0.7), stage(49.0, 0.1, 0.08, vec![1, 2])];
        let groups = vec![vec![0], vec![1]];
        let opens = |s: usize| slow[s].sheds.as_slice();
        let found = overtaken(&slow, &groups, &opens, &connected, &rank, &mut mark);
        assert_eq!(found.len(), 1);
        assert_eq!(
            (found[0].left_on.as_slice(), found[0].slower.as_slice()),
            (&[0][..], &[0][..])
        );
        let quick = vec![armed(0.1), stage(49.0, 0.1, 0.08, vec![1, 2])];
        let opens = |s: usize| quick[s].sheds.as_slice();
        assert!(overtaken(&quick, &groups, &opens, &connected, &rank, &mut mark).is_empty());
    }
}
