//! The assignment model against brute force, and its starting incumbent on larger problems.

use super::*;

/// A small deterministic generator (64-bit LCG, Knuth's MMIX constants).
struct Lcg(u64);
impl Lcg {
    fn unit(&mut self) -> f64 {
        self.0 = self
            .0
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        (self.0 >> 11) as f64 / (1u64 << 53) as f64
    }
}

/// Every assignment of `n` loads to `s` stages or none, by brute force: the feasible one of
/// least cost under the model's rules (rank order between tiers, a live load in every stage
/// at every point, a load of the measuring section, the requirements).
fn brute_force(p: &Problem) -> Option<f64> {
    let (n, s) = (p.loads.len(), p.stages);
    let mut best: Option<f64> = None;
    let mut a = vec![s; n]; // s = unshed
    loop {
        let assignment: Vec<Option<usize>> = a.iter().map(|&k| (k < s).then_some(k)).collect();
        if feasible(p, &assignment) {
            let cost = cost_of(p, &assignment);
            if best.is_none_or(|b| cost < b) {
                best = Some(cost);
            }
        }
        // Next assignment (odometer over 0..=s).
        let mut j = 0;
        while j < n && a[j] == 0 {
            a[j] = s;
            j += 1;
        }
        if j == n {
            return best;
        }
        a[j] -= 1;
    }
}

fn cost_of(p: &Problem, a: &[Option<usize>]) -> f64 {
    a.iter()
        .enumerate()
        .filter_map(|(j, k)| k.map(|k| p.cost[j][k]))
        .sum()
}

/// The model's rules, checked directly on an assignment.
fn feasible(p: &Problem, a: &[Option<usize>]) -> bool {
    let (n, s) = (p.loads.len(), p.stages);
    let pos = |j: usize| a[j].unwrap_or(s);
    let ranked = (0..n).all(|i| (0..n).all(|j| p.loads[i].1 >= p.loads[j].1 || pos(i) <= pos(j)));
    let live = (0..s).all(|k| {
        p.mw.iter()
            .all(|mw| (0..n).any(|j| a[j] == Some(k) && mw[p.loads[j].0] > 0.0))
            && p.measure[k]
                .is_none_or(|sec| (0..n).any(|j| a[j] == Some(k) && p.load_section[j] == sec))
    });
    let meets = p.requirements.iter().all(|r| {
        let total: f64 = (0..n)
            .filter(|&j| a[j].is_some_and(|k| r.stages.contains(&k)))
            .map(|j| p.mw[r.op][p.loads[j].0])
            .sum();
        if r.at_least {
            total >= r.mw - 1e-6
        } else {
            total <= r.mw + 1e-6
        }
    });
    ranked && live && meets
}

/// Against brute force over every assignment (the reference: exhaustive enumeration), on
/// random small problems with shared rank tiers, two operating points (one load off at the
/// second), a measuring section and at-least / at-most requirements: the solver finds a
/// feasible assignment whenever one exists, within the relative gap of the optimum, and says
/// infeasible only when there is none.
#[test]
fn matches_brute_force_on_small_problems() {
    let mut rng = Lcg(7);
    let mut solved = 0;
    let mut seeded = 0;
    for trial in 0..60 {
        let n = 7;
        let s = 1 + trial % 3;
        let loads: Vec<(usize, u32)> = [1, 2, 2, 3, 3, 3, 4]
            .iter()
            .enumerate()
            .map(|(i, &r)| (i, r))
            .collect();
        // MW at the two points; load 3 is switched off at the second.
        let pairs: Vec<(f64, f64)> = (0..n)
            .map(|j| {
                let first = (0.1 + rng.unit()).round_to(2);
                let second = if j == 3 {
                    0.0
                } else {
                    (0.1 + rng.unit()).round_to(2)
                };
                (first, second)
            })
            .collect();
        let mw = vec![
            pairs.iter().map(|p| p.0).collect::<Vec<f64>>(),
            pairs.iter().map(|p| p.1).collect(),
        ];
        let load_section: Vec<usize> = (0..n).map(|j| j % 2).collect();
        let measure: Vec<Option<usize>> = (0..s)
            .map(|k| (k == s - 1 && trial % 2 == 0).then_some(1))
            .collect();
        let total0: f64 = mw[0].iter().sum();
        let mut requirements = vec![Requirement {
            op: 0,
            stages: (0..s).collect(),
            mw: (0.2 + 0.5 * rng.unit()) * total0,
            at_least: true,
        }];
        if s > 1 {
            requirements.push(Requirement {
                op: 1,
                stages: vec![0],
                mw: (0.1 + 0.4 * rng.unit()) * total0,
                at_least: trial % 4 != 1,
            });
        }
        let cost: Vec<Vec<f64>> = (0..n)
            .map(|j| {
                (0..s)
                    .map(|k| mw[0][j] * (1.0 + (s - k) as f64 * rng.unit()))
                    .collect()
            })
            .collect();
        let start = vec![None; n];
        let p = Problem {
            loads: &loads,
            mw: &mw,
            stages: s,
            load_section: &load_section,
            measure: &measure,
            requirements: &requirements,
            cost: &cost,
            start: &start,
            change_cost: 0.0,
        };
        let reference = brute_force(&p);
        // The plain solve, and every model seeded by a starting incumbent found with no
        // window and with one load each side: the seed, when found, is feasible.
        let plain = Guide {
            above: usize::MAX,
            window: 0,
        };
        for guide in [
            plain,
            Guide {
                above: 0,
                window: 0,
            },
            Guide {
                above: 0,
                window: 1,
            },
        ] {
            if guide.above == 0 {
                let all = vec![Scope::Free; p.loads.len()];
                if let Some(seed) = starting_incumbent(&p, &all, guide.window) {
                    let seed = seed.assignment;
                    assert!(
                        feasible(&p, &seed),
                        "trial {trial}: seed {seed:?} breaks a rule"
                    );
                    seeded += 1;
                }
            }
            match (solve_guided(&p, guide), reference) {
                (Ok(got), Some(best)) => {
                    assert!(
                        feasible(&p, &got.assignment),
                        "trial {trial}: {got:?} breaks a rule"
                    );
                    let c = cost_of(&p, &got.assignment);
                    assert!(
                        c <= best * (1.0 + MIP_GAP) + 1e-9,
                        "trial {trial}: cost {c} against the optimum {best}"
                    );
                    solved += 1;
                }
                (Err(AssignError::Infeasible), None) => {}
                (got, reference) => {
                    panic!("trial {trial}: solver {got:?}, brute force {reference:?}")
                }
            }
        }
    }
    // The generator must exercise both outcomes for the check to mean anything.
    assert!((30..180).contains(&solved), "{solved} of 3 × 60 feasible");
    assert!(seeded >= 10, "only {seeded} seeds found");
}

/// The starting incumbent on random problems too large for brute force (40 loads in 10 rank
/// tiers, 3 stages, two operating points): whenever one is found it keeps every rule of the
/// model (checked directly), some of its loads were fixed by the relaxation (so the fixing is
/// what is tested), and the seeded solve's cost is within the gap of the plain solve's (both
/// are within the gap of the optimum).
#[test]
fn starting_incumbent_keeps_the_rules_on_larger_problems() {
    let mut rng = Lcg(11);
    let (n, s) = (40, 3);
    let (mut seeds, mut with_fixed) = (0, 0);
    for trial in 0..20 {
        let loads: Vec<(usize, u32)> = (0..n).map(|i| (i, 1 + i as u32 / 4)).collect();
        let mw: Vec<Vec<f64>> = (0..2)
            .map(|_| (0..n).map(|_| (0.1 + rng.unit()).round_to(2)).collect())
            .collect();
        let load_section: Vec<usize> = (0..n).map(|j| j % 2).collect();
        let measure = vec![None, Some(1), None];
        let total: f64 = mw[0].iter().sum();
        let total1: f64 = mw[1].iter().sum();
        let window_low = (0.3 + 0.3 * rng.unit()) * total1;
        let requirements = vec![
            Requirement {
                op: 0,
                stages: vec![0, 1, 2],
                mw: (0.3 + 0.3 * rng.unit()) * total,
                at_least: true,
            },
            Requirement {
                op: 1,
                stages: vec![0],
                mw: (0.05 + 0.1 * rng.unit()) * total,
                at_least: true,
            },
            // A narrow window on the whole table at the second point, so that a seed that
            // miscounts its fixed loads falls outside it.
            Requirement {
                op: 1,
                stages: vec![0, 1, 2],
                mw: window_low,
                at_least: true,
            },
            Requirement {
                op: 1,
                stages: vec![0, 1, 2],
                mw: window_low + 0.06 * total1,
                at_least: false,
            },
        ];
        let cost: Vec<Vec<f64>> = (0..n)
            .map(|j| {
                (0..s)
                    .map(|k| mw[0][j] * (1.0 + (s - k) as f64 * rng.unit()))
                    .collect()
            })
            .collect();
        let start = vec![None; n];
        let p = Problem {
            loads: &loads,
            mw: &mw,
            stages: s,
            load_section: &load_section,
            measure: &measure,
            requirements: &requirements,
            cost: &cost,
            start: &start,
            change_cost: 0.0,
        };
        let all = vec![Scope::Free; n];
        for window in [0, 2] {
            if let Some(seed) = starting_incumbent(&p, &all, window) {
                let (fixed, seed) = (seed.fixed, seed.assignment);
                assert!(
                    feasible(&p, &seed),
                    "trial {trial}: seed {seed:?} breaks a rule"
                );
                seeds += 1;
                if fixed > 0 {
                    with_fixed += 1;
                }
            }
        }
        let plain = solve_guided(
            &p,
            Guide {
                above: usize::MAX,
                window: 0,
            },
        );
        let seeded = solve_guided(
            &p,
            Guide {
                above: 0,
                window: 2,
            },
        );
        match (plain, seeded) {
            (Ok(a), Ok(b)) => {
                assert!(feasible(&p, &b.assignment), "trial {trial}: {b:?}");
                let (ca, cb) = (cost_of(&p, &a.assignment), cost_of(&p, &b.assignment));
                assert!(
                    cb <= ca * (1.0 + MIP_GAP) + 1e-9,
                    "trial {trial}: {cb} against {ca}"
                );
            }
            (Err(AssignError::Infeasible), Err(AssignError::Infeasible)) => {}
            (a, b) => panic!("trial {trial}: plain {a:?}, seeded {b:?}"),
        }
    }
    assert!(
        seeds >= 10 && with_fixed >= 5,
        "{seeds} seeds, {with_fixed} with fixed loads"
    );
}

trait Round {
    fn round_to(self, digits: i32) -> f64;
}
impl Round for f64 {
    fn round_to(self, digits: i32) -> f64 {
        let f = 10f64.powi(digits);
        (self * f).round() / f
    }
}
