//! The shedding scheme: stages with their trigger, intentional delay, breaker time and loads;
//! the order stages operate in, and the section a frequency stage measures at; how a
//! breaker-armed stage sized from the pre-event flow picks its loads ([`Stage::flow_pick`]); and
//! setting groups, the settings a stage has at each operating point ([`Scheme::at_point`]); and
//! the over-frequency stages that trip or run back a named generator.

use super::plant::Plant;

/// A breaker the plant has: the utility breaker, a bus tie, or a generator's own breaker.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum BreakerRef {
    Utility,
    Tie(usize),
    Generator(usize),
}

/// A validated shedding table.
#[derive(Debug, Clone, PartialEq)]
pub struct Scheme {
    pub name: String,
    pub measurement: Measurement,
    pub stages: Vec<Stage>,
    /// Over-frequency stages, in the scheme file's order.
    pub over_frequency: Vec<OverStage>,
    /// Setting groups, each switched in at its operating points; empty when every stage has the
    /// same settings everywhere.
    pub groups: Vec<SettingGroup>,
}

/// An over-frequency stage: when the frequency measured at its generator's section stays above
/// `pickup_hz` for `delay_s`, it issues its command, and `breaker_s` later the generator's
/// breaker opens or its output reference is run back.
#[derive(Debug, Clone, PartialEq)]
pub struct OverStage {
    pub id: String,
    pub pickup_hz: f64,
    pub delay_s: f64,
    pub breaker_s: f64,
    pub action: OverAction,
}

/// What an over-frequency stage does to its generator (by index).
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum OverAction {
    /// Opens the generator's breaker.
    Trip { generator: usize },
    /// Lowers the generator's output reference by `mw` (not below its `min_mw`).
    RunBack { generator: usize, mw: f64 },
}

impl OverAction {
    pub fn generator(&self) -> usize {
        match *self {
            OverAction::Trip { generator } | OverAction::RunBack { generator, .. } => generator,
        }
    }
}

/// A named setting group and the operating points (by index) at which the relays use it. A
/// point belongs to at most one group; at a point in no group every stage has the settings
/// written on the stage itself.
#[derive(Debug, Clone, PartialEq)]
pub struct SettingGroup {
    pub id: String,
    pub operating_points: Vec<usize>,
}

/// A stage's settings in one setting group (the fields a relay's setting group changes; the
/// trigger's kind, the breaker time and the loads are wiring and stay).
#[derive(Debug, Clone, PartialEq)]
pub struct GroupSettings {
    /// Index into [`Scheme::groups`].
    pub group: usize,
    pub in_service: bool,
    pub trigger: StageTrigger,
    pub delay_s: f64,
    pub sizing: Sizing,
}

/// What a breaker-armed stage opens when it operates.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Sizing {
    /// Every load it lists (and every frequency stage).
    All,
    /// In rank order, the fewest listed loads whose MW covers the flow through the arming
    /// breaker just before it opened, less the allowance; nothing when that flow was the other
    /// way (see [`Stage::flow_pick`]).
    Flow(Allowance),
}

/// The part of the pre-event flow a flow-sized stage leaves to the machines.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Allowance {
    Mw(f64),
    /// Percent of the spinning reserve (the highest output each running machine can reach less its
    /// output) of the island that lost the flow, just before the breaker opened.
    ReservePct(f64),
}

impl Allowance {
    /// The allowance in MW, given the island's spinning reserve.
    pub fn mw(&self, reserve_mw: f64) -> f64 {
        match *self {
            Allowance::Mw(mw) => mw,
            Allowance::ReservePct(pct) => pct / 100.0 * reserve_mw.max(0.0),
        }
    }
}

/// A load a flow-sized stage may open at the moment it is armed: its index and its MW then.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Candidate {
    pub load: usize,
    pub mw: f64,
}

/// How the relays measure. Generator and interface protection use the same measurement.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Measurement {
    /// First-order lag of the frequency measurement (a numerical relay's 3–6 cycle estimate).
    pub frequency_lag_s: f64,
    /// Window over which df/dt is measured.
    pub rocof_window_s: f64,
}

impl Default for Measurement {
    fn default() -> Self {
        Measurement {
            frequency_lag_s: 0.04,
            rocof_window_s: 0.1,
        }
    }
}

/// One stage of the table.
#[derive(Debug, Clone, PartialEq)]
pub struct Stage {
    pub id: String,
    pub trigger: StageTrigger,
    /// Intentional delay after pickup (frequency stages) or after the breaker opens (armed stages).
    pub delay_s: f64,
    /// Time from the trip command to the load's breaker interrupting.
    pub breaker_s: f64,
    /// Loads (by index) this stage opens; for a flow-sized stage, the loads it may open.
    pub sheds: Vec<usize>,
    /// What an armed stage opens: every listed load, or as many as the pre-event flow needs.
    pub sizing: Sizing,
    /// In service at the points in no setting group.
    pub in_service: bool,
    /// Its settings in each setting group that changes them (at most one entry per group).
    pub groups: Vec<GroupSettings>,
}

/// What starts a stage.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum StageTrigger {
    /// Under-frequency: picks up below `pickup_hz`; when `min_rocof_hz_per_s` is set, only while
    /// frequency also falls at least that fast.
    Frequency {
        pickup_hz: f64,
        min_rocof_hz_per_s: Option<f64>,
    },
    /// Event-armed: operates a fixed delay after the named breaker opens.
    Breaker(BreakerRef),
}

impl Scheme {
    /// The setting group in force at an operating point, if any.
    pub fn group_at(&self, op: usize) -> Option<usize> {
        self.groups
            .iter()
            .position(|g| g.operating_points.contains(&op))
    }

    /// The table the relays hold at an operating point: each stage with its settings in the
    /// group in force there, stages out of service left out, no groups. The stages keep the
    /// file's order; [`Scheme::in_service_at`] gives their positions in this scheme.
    pub fn at_point(&self, op: usize) -> Scheme {
        let group = self.group_at(op);
        Scheme {
            name: self.name.clone(),
            measurement: self.measurement,
            stages: self
                .stages
                .iter()
                .filter_map(|s| s.in_group(group))
                .collect(),
            // Over-frequency stages have no setting groups: the same at every point.
            over_frequency: self.over_frequency.clone(),
            groups: Vec::new(),
        }
    }

    /// Positions of the stages in service at an operating point: the k-th stage of
    /// [`Scheme::at_point`] is stage `in_service_at(op)[k]` of this scheme.
    pub fn in_service_at(&self, op: usize) -> Vec<usize> {
        let group = self.group_at(op);
        (0..self.stages.len())
            .filter(|&i| self.stages[i].in_group(group).is_some())
            .collect()
    }

    /// The operating points (by index, of `n_points`) at which each setting group is in force:
    /// one entry per group, then, when some point is in no group, `None` with those points.
    pub fn points_by_group(&self, n_points: usize) -> Vec<(Option<usize>, Vec<usize>)> {
        let mut out: Vec<(Option<usize>, Vec<usize>)> = self
            .groups
            .iter()
            .enumerate()
            .map(|(g, grp)| (Some(g), grp.operating_points.clone()))
            .collect();
        let rest: Vec<usize> = (0..n_points)
            .filter(|&op| self.group_at(op).is_none())
            .collect();
        if !rest.is_empty() {
            out.push((None, rest));
        }
        out
    }

    /// Position of a stage by id.
    pub fn stage_index(&self, id: &str) -> Option<usize> {
        self.stages.iter().position(|s| s.id == id)
    }

    /// Stage indices in the order they would operate on a falling frequency: armed stages first
    /// (they act at the event itself), by delay; then frequency stages by pickup from highest to
    /// lowest, equal pickups by delay; the file's order breaks the remaining ties.
    pub fn operating_order(&self) -> Vec<usize> {
        let mut idx: Vec<usize> = (0..self.stages.len()).collect();
        let key = |i: usize| {
            let s = &self.stages[i];
            match s.trigger {
                StageTrigger::Breaker(_) => (0, 0.0, s.delay_s),
                StageTrigger::Frequency { pickup_hz, .. } => (1, -pickup_hz, s.delay_s),
            }
        };
        idx.sort_by(|&a, &b| {
            let (ka, kb) = (key(a), key(b));
            ka.0.cmp(&kb.0)
                .then(ka.1.total_cmp(&kb.1))
                .then(ka.2.total_cmp(&kb.2))
                .then(a.cmp(&b))
        });
        idx
    }
}

impl Stage {
    /// This stage with its settings in a setting group (`None`: the settings written on the
    /// stage), or `None` when it is out of service there.
    pub fn in_group(&self, group: Option<usize>) -> Option<Stage> {
        let own = group.and_then(|g| self.groups.iter().find(|s| s.group == g));
        let (in_service, trigger, delay_s, sizing) = match own {
            Some(g) => (g.in_service, g.trigger, g.delay_s, g.sizing),
            None => (self.in_service, self.trigger, self.delay_s, self.sizing),
        };
        in_service.then(|| Stage {
            id: self.id.clone(),
            trigger,
            delay_s,
            breaker_s: self.breaker_s,
            sheds: self.sheds.clone(),
            sizing,
            in_service: true,
            groups: Vec::new(),
        })
    }

    /// The loads a stage sized from the pre-event flow opens: from `candidates` (the listed
    /// loads it can open at that moment, with their MW), taken in rank order (rank 1 first, the
    /// stage's own listing order between equal ranks), the shortest run whose MW reaches
    /// `flow_mw − allowance_mw`; all of them when even their sum falls short; none when the flow
    /// less the allowance is not positive (the flow was the other way, or the machines' allowance
    /// covers it). Loads at 0 MW are passed over.
    pub fn flow_pick(
        &self,
        plant: &Plant,
        candidates: &[Candidate],
        flow_mw: f64,
        allowance_mw: f64,
    ) -> Vec<usize> {
        let need = flow_mw - allowance_mw;
        if !(need > 0.0) {
            return Vec::new();
        }
        let mut by_rank: Vec<(u32, usize, Candidate)> = candidates
            .iter()
            .filter(|c| c.mw > 0.0)
            .map(|c| {
                let listed = self
                    .sheds
                    .iter()
                    .position(|&l| l == c.load)
                    .unwrap_or(usize::MAX);
                (plant.loads[c.load].rank, listed, *c)
            })
            .collect();
        by_rank.sort_by_key(|&(rank, listed, _)| (rank, listed));
        let mut covered = 0.0;
        let mut out = Vec::new();
        for (_, _, c) in by_rank {
            // A run that reaches the need to within rounding covers it.
            if covered >= need - 1e-9 * need.max(1.0) {
                break;
            }
            covered += c.mw;
            out.push(c.load);
        }
        out
    }

    /// The section whose frequency a frequency stage measures: its first listed load's. `None`
    /// for a stage without loads.
    pub fn measuring_section(&self, plant: &Plant) -> Option<usize> {
        self.sheds
            .first()
            .and_then(|&l| plant.loads.get(l))
            .map(|l| l.section)
    }
}
