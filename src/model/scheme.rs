//! The shedding scheme: stages with their trigger, intentional delay, breaker time and loads;
//! the order stages operate in, and the section a frequency stage measures at; and the
//! over-frequency stages that trip or run back a named generator.

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
    /// Loads (by index) this stage opens.
    pub sheds: Vec<usize>,
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
    /// The section whose frequency a frequency stage measures: its first listed load's. `None`
    /// for a stage without loads.
    pub fn measuring_section(&self, plant: &Plant) -> Option<usize> {
        self.sheds
            .first()
            .and_then(|&l| plant.loads.get(l))
            .map(|l| l.section)
    }
}
