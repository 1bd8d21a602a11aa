//! Islands from breaker states: which sections are joined to each other and to the utility.
//!
//! A pure function of the plant and the breaker states; it knows nothing of time or dynamics.
//! A generator breaker does not change topology (the machine leaves its island, the bus stays).

use crate::model::Plant;

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
}
