//! Islands from breaker states: which sections are joined to each other and to the utility.
//!
//! A pure function of the plant and the breaker states; it knows nothing of time or dynamics.
//! A generator breaker does not change topology (the machine leaves its island, the bus stays).
//! Also which way power flowed through a breaker just before it opened, and which sections lost
//! it ([`flow_before_opening`]), from each section's net demand: the rule a flow-sized armed
//! stage follows, in the simulator and in the audit alike.

use crate::model::{BreakerRef, Plant};

/// Which breakers are closed at a moment.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct BreakerState {
    pub utility_closed: bool,
    /// By tie index.
    pub tie_closed: Vec<bool>,
}

impl BreakerState {
    /// The state before any event at an operating point (by index).
    pub fn initial(plant: &Plant, operating_point: usize, utility_closed: bool) -> BreakerState {
        let op = &plant.operating_points[operating_point];
        BreakerState {
            utility_closed: utility_closed && plant.utility.is_some(),
            tie_closed: op.ties_open.iter().map(|open| !open).collect(),
        }
    }
}

/// A set of sections joined by closed ties.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Island {
    /// Section indices, ascending.
    pub sections: Vec<usize>,
    /// The utility breaker is closed and its section is in this island.
    pub on_utility: bool,
}

impl Island {
    /// Whether a section belongs to this island.
    pub fn contains(&self, section: usize) -> bool {
        self.sections.binary_search(&section).is_ok()
    }
}

/// The islands at a breaker state, ordered by their lowest section index (deterministic).
pub fn islands(plant: &Plant, breakers: &BreakerState) -> Vec<Island> {
    let n = plant.sections.len();
    let mut root: Vec<usize> = (0..n).collect();
    fn find(root: &mut [usize], mut i: usize) -> usize {
        while root[i] != i {
            root[i] = root[root[i]];
            i = root[i];
        }
        i
    }
    for (tie, closed) in plant.ties.iter().zip(&breakers.tie_closed) {
        if *closed {
            let a = find(&mut root, tie.between[0]);
            let b = find(&mut root, tie.between[1]);
            // Keep the smaller index as root so that island order is stable.
            let (lo, hi) = if a < b { (a, b) } else { (b, a) };
            root[hi] = lo;
        }
    }
    let mut result: Vec<Island> = Vec::new();
    let mut island_of_root = vec![usize::MAX; n];
    for s in 0..n {
        let r = find(&mut root, s);
        if island_of_root[r] == usize::MAX {
            island_of_root[r] = result.len();
            result.push(Island {
                sections: Vec::new(),
                on_utility: false,
            });
        }
        result[island_of_root[r]].sections.push(s);
    }
    if let (Some(u), true) = (&plant.utility, breakers.utility_closed) {
        for island in &mut result {
            if island.contains(u.section) {
                island.on_utility = true;
            }
        }
    }
    result
}

/// The island (index into [`islands`]' result) that holds a section.
pub fn island_of(islands: &[Island], section: usize) -> usize {
    islands
        .iter()
        .position(|i| i.contains(section))
        .unwrap_or(0)
}

/// The flow through a breaker just before it opened, and the sections that lost it.
#[derive(Debug, Clone, PartialEq)]
pub struct Cut {
    /// MW that flowed into `sections` through the breaker (never negative).
    pub flow_mw: f64,
    /// The sections that lost the flow, ascending: the plant's side of the utility breaker, a
    /// generator's island, the receiving side of a tie.
    pub sections: Vec<usize>,
}

/// Which way power flowed through `breaker` just before it opened, at breaker state `before`
/// (the breaker still closed): `net_mw[s]` is section `s`'s demand less the output of its
/// machines (with any power going into the stored energy of its island counted as demand), and
/// `gen_mw[g]` each machine's electrical output (0 when not running).
///
/// - Utility breaker: the import of the island joined to the utility, `Σ net_mw` over it
///   (negative when it exported); it went into that island's sections.
/// - Generator breaker: the machine's output; it went into the machine's island.
/// - Tie breaker: the flow into the side of the tie that receives it: for a side without the
///   utility `Σ net_mw` over it, the other side giving what this one takes. A tie whose opening
///   does not split its island (a closed ring) carries no flow this model can tell: 0 MW.
///
/// `None` when the breaker was already open (or the machine not running): it opens nothing.
pub fn flow_before_opening(
    plant: &Plant,
    before: &BreakerState,
    breaker: BreakerRef,
    net_mw: &[f64],
    gen_mw: &[f64],
) -> Option<Cut> {
    let now = islands(plant, before);
    let sum = |sections: &[usize]| sections.iter().map(|&s| net_mw[s]).sum::<f64>();
    match breaker {
        BreakerRef::Utility => {
            let island = now.iter().find(|i| i.on_utility)?;
            Some(Cut {
                flow_mw: sum(&island.sections),
                sections: island.sections.clone(),
            })
        }
        BreakerRef::Generator(g) => {
            let out = *gen_mw.get(g)?;
            let gen = plant.generators.get(g)?;
            let island = &now[island_of(&now, gen.section)];
            Some(Cut {
                flow_mw: out,
                sections: island.sections.clone(),
            })
        }
        BreakerRef::Tie(t) => {
            if !before.tie_closed.get(t).copied().unwrap_or(false) {
                return None;
            }
            let mut after = before.clone();
            after.tie_closed[t] = false;
            let parts = islands(plant, &after);
            let [a, b] = plant.ties[t].between;
            let (ia, ib) = (island_of(&parts, a), island_of(&parts, b));
            if ia == ib {
                return Some(Cut {
                    flow_mw: 0.0,
                    sections: parts[ia].sections.clone(),
                });
            }
            let (pa, pb) = (&parts[ia], &parts[ib]);
            // Into side a: its own net demand, unless the utility is on that side.
            let into_a = if pa.on_utility {
                -sum(&pb.sections)
            } else {
                sum(&pa.sections)
            };
            Some(if into_a >= 0.0 {
                Cut {
                    flow_mw: into_a,
                    sections: pa.sections.clone(),
                }
            } else {
                Cut {
                    flow_mw: -into_a,
                    sections: pb.sections.clone(),
                }
            })
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::{Criteria, OperatingPoint, Section, Tie};

    fn three_sections() -> Plant {
        Plant {
            name: "t".into(),
            nominal_hz: 50.0,
            sections: ["a", "b", "c"]
                .iter()
                .map(|s| Section { id: s.to_string() })
                .collect(),
            ties: vec![
                Tie {
                    id: "ab".into(),
                    between: [0, 1],
                    normally_open: false,
                },
                Tie {
                    id: "bc".into(),
                    between: [1, 2],
                    normally_open: false,
                },
            ],
            utility: None,
            generators: vec![],
            loads: vec![],
            operating_points: vec![OperatingPoint {
                id: "n".into(),
                description: String::new(),
                load_mw: vec![],
                online: vec![],
                output_mw: vec![],
                import_mw: 0.0,
                ties_open: vec![false, false],
            }],
            criteria: Criteria::defaults(50.0),
            design: crate::model::DesignLimits::defaults(50.0, false),
        }
    }

    #[test]
    fn closed_ties_join_all_sections() {
        let p = three_sections();
        let isl = islands(
            &p,
            &BreakerState {
                utility_closed: false,
                tie_closed: vec![true, true],
            },
        );
        assert_eq!(
            isl,
            vec![Island {
                sections: vec![0, 1, 2],
                on_utility: false
            }]
        );
    }

    #[test]
    fn opening_a_tie_splits_by_section() {
        let p = three_sections();
        let isl = islands(
            &p,
            &BreakerState {
                utility_closed: false,
                tie_closed: vec![true, false],
            },
        );
        assert_eq!(isl.len(), 2);
        assert_eq!(isl[0].sections, vec![0, 1]);
        assert_eq!(isl[1].sections, vec![2]);
        assert_eq!(island_of(&isl, 2), 1);
    }

    #[test]
    fn a_tie_flow_goes_to_the_side_short_of_power() {
        // a–b–c in a line, no utility; net demand a: −3 MW (surplus), b: +1, c: +2. Opening
        // bc: side c takes 2 MW from a+b (Kirchhoff's current law at the cut: what c lacks flows
        // in through the one tie); opening ab: a gives 3 MW to b+c.
        let p = three_sections();
        let before = BreakerState {
            utility_closed: false,
            tie_closed: vec![true, true],
        };
        let net = [-3.0, 1.0, 2.0];
        let cut = flow_before_opening(&p, &before, BreakerRef::Tie(1), &net, &[]).unwrap();
        assert_eq!(
            cut,
            Cut {
                flow_mw: 2.0,
                sections: vec![2]
            }
        );
        let cut = flow_before_opening(&p, &before, BreakerRef::Tie(0), &net, &[]).unwrap();
        assert_eq!(
            cut,
            Cut {
                flow_mw: 3.0,
                sections: vec![1, 2]
            }
        );
        // An open tie carries nothing and arms nothing.
        let open = BreakerState {
            utility_closed: false,
            tie_closed: vec![true, false],
        };
        assert_eq!(
            flow_before_opening(&p, &open, BreakerRef::Tie(1), &net, &[]),
            None
        );
    }
}
