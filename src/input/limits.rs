//! Input limits: how large a file, how many loads, stages, cases, how long a case, how many trace
//! samples. Each limit has a default, a name, and an environment variable that raises (or lowers)
//! it; this is the one place that reads those variables.
//!
//! Owns the limit table and the wording of over-limit messages. It must not decide what to do
//! about a breach (the validators report it) and must not read anything but `NADIR_MAX_*`
//! variables. The limits bound time and memory for any input, so a wrong file (a log, a generated
//! dump, a YAML bomb) is refused quickly with a message instead of exhausting the machine.
//!
//! The defaults sit far above any real industrial plant (a large refinery has a few hundred
//! switched loads and a few dozen machines), so a practitioner meets a limit only with generated
//! or mistaken input; the variable is there for the study that really is that large.

use std::fmt;

/// One limit: what it counts, its default and the variable that overrides it.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Limit {
    /// Position in [`ALL`] and in [`Limits`]' table.
    index: usize,
    /// Short name used in messages, e.g. `max_loads`.
    pub name: &'static str,
    /// What is counted, e.g. "loads".
    pub noun: &'static str,
    /// The default value.
    pub default: u64,
    /// The environment variable that overrides the default.
    pub env: &'static str,
}

/// Largest input file, in bytes (4 MiB): far above any real plant, small enough that a wrong file
/// (a log, a binary) is refused before parsing.
pub const FILE_BYTES: Limit = Limit {
    index: 0,
    name: "max_file_bytes",
    noun: "bytes",
    default: 4 * 1024 * 1024,
    env: "NADIR_MAX_FILE_BYTES",
};
/// Loads in one plant file.
pub const LOADS: Limit = Limit {
    index: 1,
    name: "max_loads",
    noun: "loads",
    default: 2000,
    env: "NADIR_MAX_LOADS",
};
/// Generators in one plant file.
pub const GENERATORS: Limit = Limit {
    index: 2,
    name: "max_generators",
    noun: "generators",
    default: 200,
    env: "NADIR_MAX_GENERATORS",
};
/// Sections in one plant file.
pub const SECTIONS: Limit = Limit {
    index: 3,
    name: "max_sections",
    noun: "sections",
    default: 100,
    env: "NADIR_MAX_SECTIONS",
};
/// Ties in one plant file (twice the sections: a meshed busbar layout still fits).
pub const TIES: Limit = Limit {
    index: 4,
    name: "max_ties",
    noun: "ties",
    default: 200,
    env: "NADIR_MAX_TIES",
};
/// Operating points in one plant file.
pub const OPERATING_POINTS: Limit = Limit {
    index: 5,
    name: "max_operating_points",
    noun: "operating points",
    default: 100,
    env: "NADIR_MAX_OPERATING_POINTS",
};
/// Cases in one cases file.
pub const CASES: Limit = Limit {
    index: 6,
    name: "max_cases",
    noun: "cases",
    default: 2000,
    env: "NADIR_MAX_CASES",
};
/// Events in one case.
pub const EVENTS_PER_CASE: Limit = Limit {
    index: 7,
    name: "max_events_per_case",
    noun: "events",
    default: 100,
    env: "NADIR_MAX_EVENTS_PER_CASE",
};
/// Points of one case's utility frequency profile.
pub const PROFILE_POINTS: Limit = Limit {
    index: 8,
    name: "max_profile_points",
    noun: "profile points",
    default: 10_000,
    env: "NADIR_MAX_PROFILE_POINTS",
};
/// Simulated time of one case, in seconds (one hour: frequency studies of load shedding end within
/// a minute; an hour leaves room for slow boiler and governor studies).
pub const CASE_DURATION_S: Limit = Limit {
    index: 9,
    name: "max_case_duration_s",
    noun: "s of simulated time",
    default: 3600,
    env: "NADIR_MAX_CASE_DURATION_S",
};
/// Stages in one scheme file.
pub const STAGES: Limit = Limit {
    index: 10,
    name: "max_stages",
    noun: "stages",
    default: 64,
    env: "NADIR_MAX_STAGES",
};
/// Samples the simulator keeps in one recorded trace (for plots and CSV); at 10 ms resolution this
/// is over half an hour. The input side does not count samples; the simulator reads this limit
/// through [`Limits::get`] and reports a breach in the same words ([`over_limit_help`]).
pub const TRACE_SAMPLES: Limit = Limit {
    index: 11,
    name: "max_trace_samples",
    noun: "trace samples",
    default: 200_000,
    env: "NADIR_MAX_TRACE_SAMPLES",
};

/// Points of the design grid: pickups × delays one proposed stage may take (the plant file's
/// `design.pickup_hz` and `design.delay_s`). The settings search tries every delay for each stage
/// and walks the pickups one step at a time, so its time and memory grow with these points; a
/// step that validation would otherwise accept (1e-12 Hz) would make a grid of terabytes. The
/// default is far finer than relays are set (a 0.01 Hz pickup grid over 2 Hz with a 0.01 s delay
/// grid over 0.4 s has 8 241 points).
pub const DESIGN_GRID_POINTS: Limit = Limit {
    index: 12,
    name: "max_design_grid_points",
    noun: "grid points (pickups × delays)",
    default: 10_000,
    env: "NADIR_MAX_DESIGN_GRID_POINTS",
};

/// Largest recorded-event file (a COMTRADE data file or a CSV record), in bytes (256 MiB). Records
/// are larger than the YAML inputs: a disturbance recorder at 10 kHz keeps 10 s of 16 channels in
/// about 4 MiB of binary data and five times that as ASCII; the limit leaves room for long records
/// and refuses a wrong file (a disk image, a video) before it is read.
pub const RECORD_BYTES: Limit = Limit {
    index: 13,
    name: "max_record_bytes",
    noun: "bytes",
    default: 256 * 1024 * 1024,
    env: "NADIR_MAX_RECORD_BYTES",
};
/// Samples in one recorded-event file (rows of a CSV record, samples of a COMTRADE record): 10 kHz
/// for 400 s. The reader keeps only the channel it uses, so memory stays within a few times this
/// count in 8-byte numbers.
pub const RECORD_SAMPLES: Limit = Limit {
    index: 14,
    name: "max_record_samples",
    noun: "samples",
    default: 4_000_000,
    env: "NADIR_MAX_RECORD_SAMPLES",
};

/// Diagnostics kept for one file; past this many, the rest are counted and summarised in one
/// closing diagnostic. Not adjustable: a thousand messages already say "wrong file", and the cap
/// keeps a generated file full of mistakes from costing time and memory in messages.
pub const MAX_DIAGNOSTICS: usize = 1000;

/// Every limit, in the order of their `index`.
pub const ALL: [Limit; 15] = [
    FILE_BYTES,
    LOADS,
    GENERATORS,
    SECTIONS,
    TIES,
    OPERATING_POINTS,
    CASES,
    EVENTS_PER_CASE,
    PROFILE_POINTS,
    CASE_DURATION_S,
    STAGES,
    TRACE_SAMPLES,
    DESIGN_GRID_POINTS,
    RECORD_BYTES,
    RECORD_SAMPLES,
];

/// Longest id (in characters) that the "did you mean" search compares with the known ids; a
/// longer one is reported without suggestions. Not adjustable: real ids are a few words, and the
/// edit distance costs the product of the two lengths, so a misspelt megabyte-long id would
/// otherwise keep the search busy for minutes.
pub const MAX_SUGGEST_CHARS: usize = 200;

/// Characters of an unknown id or key quoted in a message; a longer one is shortened with its
/// length given, so that one huge id does not make a huge message.
pub const MAX_QUOTED_CHARS: usize = 80;

/// The limits in force: the defaults, each possibly overridden by its environment variable.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Limits {
    values: [u64; ALL.len()],
}

/// An environment variable that does not hold a usable limit.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct BadLimit {
    pub env: &'static str,
    pub value: String,
}

impl fmt::Display for BadLimit {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(
            f,
            "environment variable {} is `{}`, expected a whole number of at least 1",
            self.env, self.value
        )
    }
}

impl Limits {
    /// The built-in defaults, ignoring the environment.
    pub fn defaults() -> Limits {
        let mut values = [0; ALL.len()];
        for l in ALL {
            values[l.index] = l.default;
        }
        Limits { values }
    }

    /// The defaults overridden by any `NADIR_MAX_*` variable that is set.
    pub fn from_env() -> Result<Limits, BadLimit> {
        Limits::from_lookup(|name| std::env::var(name).ok())
    }

    /// The defaults overridden through `lookup` (the environment in [`Self::from_env`]); a value
    /// may use `_` as a digit separator (`NADIR_MAX_LOADS=10_000`).
    pub fn from_lookup(lookup: impl Fn(&str) -> Option<String>) -> Result<Limits, BadLimit> {
        let mut limits = Limits::defaults();
        for l in ALL {
            let Some(text) = lookup(l.env) else { continue };
            let digits: String = text.trim().chars().filter(|&c| c != '_').collect();
            match digits.parse::<u64>() {
                Ok(v) if v >= 1 => limits.values[l.index] = v,
                _ => {
                    return Err(BadLimit {
                        env: l.env,
                        value: text,
                    })
                }
            }
        }
        Ok(limits)
    }

    /// The value in force for `limit`.
    pub fn get(&self, limit: Limit) -> u64 {
        self.values[limit.index]
    }

    /// A copy with `limit` set to `value` (for tests and callers that hold their own settings).
    pub fn with(mut self, limit: Limit, value: u64) -> Limits {
        self.values[limit.index] = value;
        self
    }

    /// Whether `count` exceeds `limit`.
    pub fn exceeded(&self, limit: Limit, count: u64) -> bool {
        count > self.get(limit)
    }
}

/// The message for a breach, `subject` saying whose count it is ("the plant file has", "case `c1`
/// has"): names the count, the limit and the value in force.
pub fn over_limit_message(limits: &Limits, limit: Limit, subject: &str, count: u64) -> String {
    format!(
        "{subject} {count} {}, above the limit {} = {}",
        limit.noun,
        limit.name,
        limits.get(limit)
    )
}

/// A count for a message: digits up to 10^15, else scientific notation (a grid step of 1e-300
/// counts 1e300 points, which no integer type holds).
pub fn count_text(count: f64) -> String {
    if count < 1e15 {
        format!("{}", count.round() as u64)
    } else {
        format!("{count:.1e}")
    }
}

/// The help for a breach: how to raise the limit.
pub fn over_limit_help(limit: Limit, count: u64) -> String {
    format!(
        "check that this is the intended input; to allow it, raise the limit by setting the \
         environment variable {}={count} (or higher); see docs/guarantees.md, section limits",
        limit.env
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn table_indices_match_positions() {
        for (i, l) in ALL.iter().enumerate() {
            assert_eq!(l.index, i, "{}", l.name);
            assert!(l.env.starts_with("NADIR_MAX_"), "{}", l.env);
        }
    }

    #[test]
    fn environment_overrides_and_refuses_nonsense() {
        let l = Limits::from_lookup(|k| (k == "NADIR_MAX_LOADS").then(|| "10_000".to_string()))
            .unwrap();
        assert_eq!(l.get(LOADS), 10_000);
        assert_eq!(l.get(STAGES), 64);
        for bad in ["", "many", "-1", "0", "1e6", "2.5"] {
            let e = Limits::from_lookup(|k| (k == "NADIR_MAX_STAGES").then(|| bad.to_string()))
                .unwrap_err();
            assert_eq!(e.env, "NADIR_MAX_STAGES");
            assert!(e.to_string().contains("expected a whole number"), "{e}");
        }
    }

    #[test]
    fn messages_name_the_limit_and_the_variable() {
        let l = Limits::defaults();
        let m = over_limit_message(&l, LOADS, "the plant file has", 2001);
        assert_eq!(
            m,
            "the plant file has 2001 loads, above the limit max_loads = 2000"
        );
        assert!(over_limit_help(LOADS, 2001).contains("NADIR_MAX_LOADS=2001"));
    }
}
