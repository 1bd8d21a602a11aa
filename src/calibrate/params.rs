//! The parameters a calibration may fit: what a user names (`KIND:TARGET=LO..HI`), checked
//! against the plant, and how one value is read from and written into a plant in memory.
//!
//! Owns the request syntax and its messages, and the map from a parameter to the plant fields it
//! sets (one field, or one shared value for a class of loads). Must not simulate or fit.
//!
//! Kinds take the plant file's own field names:
//! * `inertia_s:ID` — a generator's inertia constant H (s on its rating), or a motor load's;
//! * `freq_exp:ID` — a load's frequency exponent k in P = P0·(f/f0)^k;
//! * `droop_pct:ID`, `governor_s:ID`, `turbine_s:ID` — a generator's governor.
//!
//! For the load kinds TARGET may also be `all` (every load) or `@VALUE` (every load whose value
//! in the plant file is VALUE, a class such as Kundur's industrial motors at k = 2.5): the loads
//! then share one fitted value, which starts from their load-weighted mean.

use crate::input::ValueEdit;
use crate::model::{Plant, PrimeMover};
use std::fmt;

/// What a parameter is.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Kind {
    GeneratorInertia,
    LoadInertia,
    FreqExp,
    Droop,
    GovernorLag,
    TurbineLag,
}

impl Kind {
    /// The plant file's field name.
    pub fn field(self) -> &'static str {
        match self {
            Kind::GeneratorInertia | Kind::LoadInertia => "inertia_s",
            Kind::FreqExp => "freq_exp",
            Kind::Droop => "droop_pct",
            Kind::GovernorLag => "governor_s",
            Kind::TurbineLag => "turbine_s",
        }
    }

    /// The range the plant file accepts for the field (the validator's range), as the widest
    /// bounds a fit may use: (lowest, lowest is allowed itself, highest).
    fn allowed(self) -> (f64, bool, f64) {
        match self {
            Kind::GeneratorInertia => (0.0, false, 20.0),
            Kind::LoadInertia => (0.0, true, 20.0),
            Kind::FreqExp => (-2.0, true, 8.0),
            Kind::Droop => (0.0, false, 20.0),
            Kind::GovernorLag | Kind::TurbineLag => (0.0, true, 100.0),
        }
    }

    /// Unit shown beside values.
    pub fn unit(self) -> &'static str {
        match self {
            Kind::GeneratorInertia | Kind::LoadInertia | Kind::GovernorLag | Kind::TurbineLag => {
                " s"
            }
            Kind::Droop => " %",
            Kind::FreqExp => "",
        }
    }
}

/// One parameter to fit, resolved against a plant.
#[derive(Debug, Clone, PartialEq)]
pub struct Parameter {
    /// As the user wrote it before `=`, e.g. `inertia_s:stg-1`.
    pub name: String,
    pub kind: Kind,
    /// Generator index (generator kinds) or load indices (load kinds) it sets.
    pub targets: Vec<usize>,
    pub lower: f64,
    pub upper: f64,
    /// The value in the plant before the fit (load-weighted mean for a class of loads).
    pub initial: f64,
}

/// A fit request that cannot be used, in words that say the fix.
#[derive(Debug, Clone, PartialEq)]
pub struct RequestError {
    /// The request as written.
    pub request: String,
    pub message: String,
    pub help: String,
}

impl fmt::Display for RequestError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(
            f,
            "--fit {}: {}\n  help: {}",
            self.request, self.message, self.help
        )
    }
}

/// The kinds in words, for messages.
pub const KINDS_HELP: &str = "inertia_s:ID (generator or motor load), freq_exp:ID, droop_pct:ID, \
     governor_s:ID, turbine_s:ID; for loads ID may be `all` or `@VALUE` (the loads whose value is \
     VALUE)";

/// Reads one request `KIND:TARGET=LO..HI` against `plant` (named `plant_file` in messages).
pub fn parse(request: &str, plant: &Plant, plant_file: &str) -> Result<Parameter, RequestError> {
    let err = |message: String, help: String| RequestError {
        request: request.to_string(),
        message,
        help,
    };
    let Some((name, bounds)) = request.split_once('=') else {
        return Err(err(
            "no bounds".into(),
            "write the bounds after `=`, lowest first, for example --fit inertia_s:stg-1=2..8"
                .into(),
        ));
    };
    let name = name.trim();
    let Some((kind_text, target)) = name.split_once(':') else {
        return Err(err(
            format!("`{name}` names no plant item"),
            format!("write KIND:ID=LO..HI; kinds are {KINDS_HELP}"),
        ));
    };
    let (kind_text, target) = (kind_text.trim(), target.trim());
    let (lower, upper) = parse_bounds(bounds.trim()).map_err(|m| {
        err(
            m,
            "write the bounds as two numbers LO..HI, lowest first, in the field's own unit (for \
             example inertia_s:stg-1=2..8 for 2 s to 8 s)"
                .into(),
        )
    })?;
    let gen_idx = plant.generators.iter().position(|g| g.id == target);
    let load_idx = plant.loads.iter().position(|l| l.id == target);
    let ids = |what: &str| -> String {
        let list: Vec<&str> = match what {
            "generator" => plant.generators.iter().map(|g| g.id.as_str()).collect(),
            _ => plant.loads.iter().map(|l| l.id.as_str()).take(12).collect(),
        };
        let more = if what != "generator" && plant.loads.len() > 12 {
            ", …"
        } else {
            ""
        };
        format!("{}{more}", list.join(", "))
    };
    let (kind, targets) = match kind_text {
        "inertia_s" => match (gen_idx, load_idx) {
            (Some(_), Some(_)) => {
                return Err(err(
                    format!("`{target}` is both a generator and a load in {plant_file}"),
                    "give the generator or the load another id in the plant file".into(),
                ))
            }
            (Some(g), None) => (Kind::GeneratorInertia, vec![g]),
            (None, Some(_)) => (Kind::LoadInertia, load_targets(plant, target, Kind::LoadInertia)),
            (None, None) => match load_class(plant, target, Kind::LoadInertia) {
                Some(list) => (Kind::LoadInertia, list),
                None => {
                    return Err(err(
                        format!("no generator or load `{target}` in {plant_file}"),
                        format!(
                            "name a generator ({}) or a load ({}), or `all` or `@VALUE` for a class of loads",
                            ids("generator"),
                            ids("load")
                        ),
                    ))
                }
            },
        },
        "freq_exp" => {
            let list = if load_idx.is_some() {
                load_targets(plant, target, Kind::FreqExp)
            } else {
                match load_class(plant, target, Kind::FreqExp) {
                    Some(list) => list,
                    None => {
                        let hint = if gen_idx.is_some() {
                            format!("`{target}` is a generator; freq_exp belongs to loads")
                        } else {
                            format!("no load `{target}` in {plant_file}")
                        };
                        return Err(err(
                            hint,
                            format!(
                                "name a load ({}), `all`, or `@VALUE` for the loads whose exponent is VALUE",
                                ids("load")
                            ),
                        ));
                    }
                }
            };
            (Kind::FreqExp, list)
        }
        "droop_pct" | "governor_s" | "turbine_s" => {
            let kind = match kind_text {
                "droop_pct" => Kind::Droop,
                "governor_s" => Kind::GovernorLag,
                _ => Kind::TurbineLag,
            };
            let Some(g) = gen_idx else {
                let hint = if load_idx.is_some() {
                    format!("`{target}` is a load; {kind_text} belongs to a generator's governor")
                } else {
                    format!("no generator `{target}` in {plant_file}")
                };
                return Err(err(hint, format!("name a generator: {}", ids("generator"))));
            };
            let gen = &plant.generators[g];
            if governor_value(&gen.governor.prime_mover, kind).is_none()
                && kind != Kind::Droop
            {
                return Err(err(
                    format!(
                        "generator `{target}` has no {kind_text} (its prime mover is {})",
                        mover_name(&gen.governor.prime_mover)
                    ),
                    "fit a parameter its model has: steam and gas turbines have governor_s and \
                     turbine_s; engines, reheat steam and hydro have governor_s"
                        .into(),
                ));
            }
            if kind == Kind::Droop && gen.governor.isochronous {
                return Err(err(
                    format!("generator `{target}` is isochronous; its droop is not used"),
                    "fit the droop of a machine in droop control".into(),
                ));
            }
            (kind, vec![g])
        }
        other => {
            return Err(err(
                format!("unknown parameter kind `{other}`"),
                format!("kinds are {KINDS_HELP}"),
            ))
        }
    };
    if targets.is_empty() {
        return Err(err(
            format!(
                "no load in {plant_file} has {} {}",
                kind.field(),
                &target[1..]
            ),
            "write @VALUE with a value the plant file uses, or name a load".into(),
        ));
    }
    let (lo_allowed, lo_inclusive, hi_allowed) = kind.allowed();
    let below = if lo_inclusive {
        lower < lo_allowed
    } else {
        lower <= lo_allowed
    };
    if below || upper > hi_allowed {
        return Err(err(
            format!(
                "bounds {}..{} leave the range the plant file accepts for {} ({}{} to {}{})",
                num(lower),
                num(upper),
                kind.field(),
                if lo_inclusive { "" } else { "above " },
                num(lo_allowed),
                num(hi_allowed),
                kind.unit()
            ),
            "keep both bounds inside that range".into(),
        ));
    }
    let mut p = Parameter {
        name: name.to_string(),
        kind,
        targets,
        lower,
        upper,
        initial: 0.0,
    };
    p.initial = value(plant, &p);
    Ok(p)
}

/// Checks a list of parameters together: no plant field may be set by two of them.
pub fn check_disjoint(params: &[Parameter]) -> Result<(), RequestError> {
    for (i, a) in params.iter().enumerate() {
        for b in &params[..i] {
            let same_field = |k: Kind| match k {
                Kind::GeneratorInertia => 0,
                Kind::LoadInertia => 1,
                Kind::FreqExp => 2,
                Kind::Droop => 3,
                Kind::GovernorLag => 4,
                Kind::TurbineLag => 5,
            };
            if same_field(a.kind) == same_field(b.kind)
                && a.targets.iter().any(|t| b.targets.contains(t))
            {
                return Err(RequestError {
                    request: a.name.clone(),
                    message: format!("sets a field that --fit {} already sets", b.name),
                    help: "name each generator or load in one --fit of each kind only".into(),
                });
            }
        }
    }
    Ok(())
}

/// The parameter's value in `plant` (load-weighted mean for several loads; plain mean when they
/// carry no load).
pub fn value(plant: &Plant, p: &Parameter) -> f64 {
    match p.kind {
        Kind::GeneratorInertia => plant.generators[p.targets[0]].inertia_s,
        Kind::Droop => plant.generators[p.targets[0]].governor.droop_pct,
        Kind::GovernorLag | Kind::TurbineLag => {
            governor_value(&plant.generators[p.targets[0]].governor.prime_mover, p.kind)
                .unwrap_or(0.0)
        }
        Kind::FreqExp | Kind::LoadInertia => {
            let get = |i: usize| {
                let l = &plant.loads[i];
                if p.kind == Kind::FreqExp {
                    l.freq_exp
                } else {
                    l.inertia_s
                }
            };
            let weight: f64 = p.targets.iter().map(|&i| plant.loads[i].p_mw).sum();
            if weight > 0.0 {
                p.targets
                    .iter()
                    .map(|&i| plant.loads[i].p_mw * get(i))
                    .sum::<f64>()
                    / weight
            } else {
                p.targets.iter().map(|&i| get(i)).sum::<f64>() / p.targets.len() as f64
            }
        }
    }
}

/// Sets the parameter to `v` in `plant` (every target of a class).
pub fn apply(plant: &mut Plant, p: &Parameter, v: f64) {
    for &i in &p.targets {
        match p.kind {
            Kind::GeneratorInertia => plant.generators[i].inertia_s = v,
            Kind::Droop => plant.generators[i].governor.droop_pct = v,
            Kind::GovernorLag | Kind::TurbineLag => {
                set_governor_value(&mut plant.generators[i].governor.prime_mover, p.kind, v)
            }
            Kind::FreqExp => plant.loads[i].freq_exp = v,
            Kind::LoadInertia => plant.loads[i].inertia_s = v,
        }
    }
}

/// The plant-file edits that write `v` for the parameter (one per target), each with its note.
pub fn edits(p: &Parameter, v: f64, note: &str) -> Vec<ValueEdit> {
    p.targets
        .iter()
        .map(|&i| {
            let (list, keys): (&'static str, Vec<&'static str>) = match p.kind {
                Kind::GeneratorInertia => ("generators", vec!["inertia_s"]),
                Kind::Droop | Kind::GovernorLag | Kind::TurbineLag => {
                    ("generators", vec!["governor", p.kind.field()])
                }
                Kind::FreqExp | Kind::LoadInertia => ("loads", vec![p.kind.field()]),
            };
            ValueEdit {
                list,
                index: i,
                keys,
                value: v,
                note: note.to_string(),
            }
        })
        .collect()
}

fn load_targets(plant: &Plant, target: &str, _kind: Kind) -> Vec<usize> {
    plant
        .loads
        .iter()
        .position(|l| l.id == target)
        .into_iter()
        .collect()
}

/// `all` or `@VALUE`: the loads of the class (possibly none); `None` when `target` is neither.
fn load_class(plant: &Plant, target: &str, kind: Kind) -> Option<Vec<usize>> {
    if target == "all" {
        return Some((0..plant.loads.len()).collect());
    }
    let v: f64 = target.strip_prefix('@')?.trim().parse().ok()?;
    Some(
        plant
            .loads
            .iter()
            .enumerate()
            .filter(|(_, l)| {
                let x = if kind == Kind::FreqExp {
                    l.freq_exp
                } else {
                    l.inertia_s
                };
                (x - v).abs() <= 1e-9 * v.abs().max(1.0)
            })
            .map(|(i, _)| i)
            .collect(),
    )
}

fn parse_bounds(text: &str) -> Result<(f64, f64), String> {
    let Some((a, b)) = text.split_once("..") else {
        return Err(format!("bounds `{text}` are not LO..HI"));
    };
    let read = |s: &str| -> Result<f64, String> {
        let v: f64 = s
            .trim()
            .parse()
            .map_err(|_| format!("bound `{}` is not a number", s.trim()))?;
        if v.is_finite() {
            Ok(v)
        } else {
            Err(format!("bound `{}` is not a finite number", s.trim()))
        }
    };
    let (lo, hi) = (read(a)?, read(b)?);
    if lo >= hi {
        return Err(format!(
            "lower bound {} is not below upper bound {} (inverted or equal)",
            num(lo),
            num(hi)
        ));
    }
    Ok((lo, hi))
}

fn governor_value(m: &PrimeMover, kind: Kind) -> Option<f64> {
    match (m, kind) {
        (PrimeMover::Steam { governor_s, .. }, Kind::GovernorLag)
        | (PrimeMover::SteamReheat { governor_s, .. }, Kind::GovernorLag)
        | (PrimeMover::Hydro { governor_s, .. }, Kind::GovernorLag)
        | (PrimeMover::GasTurbine { governor_s, .. }, Kind::GovernorLag)
        | (PrimeMover::Engine { governor_s, .. }, Kind::GovernorLag) => Some(*governor_s),
        (PrimeMover::Steam { turbine_s, .. }, Kind::TurbineLag)
        | (PrimeMover::GasTurbine { turbine_s, .. }, Kind::TurbineLag) => Some(*turbine_s),
        _ => None,
    }
}

fn set_governor_value(m: &mut PrimeMover, kind: Kind, v: f64) {
    match (m, kind) {
        (PrimeMover::Steam { governor_s, .. }, Kind::GovernorLag)
        | (PrimeMover::SteamReheat { governor_s, .. }, Kind::GovernorLag)
        | (PrimeMover::Hydro { governor_s, .. }, Kind::GovernorLag)
        | (PrimeMover::GasTurbine { governor_s, .. }, Kind::GovernorLag)
        | (PrimeMover::Engine { governor_s, .. }, Kind::GovernorLag) => *governor_s = v,
        (PrimeMover::Steam { turbine_s, .. }, Kind::TurbineLag)
        | (PrimeMover::GasTurbine { turbine_s, .. }, Kind::TurbineLag) => *turbine_s = v,
        _ => {}
    }
}

fn mover_name(m: &PrimeMover) -> &'static str {
    match m {
        PrimeMover::Steam { .. } => "steam",
        PrimeMover::SteamReheat { .. } => "steam_reheat",
        PrimeMover::Hydro { .. } => "hydro",
        PrimeMover::GasTurbine { .. } => "gas_turbine",
        PrimeMover::Engine { .. } => "engine",
        PrimeMover::Fixed => "fixed",
    }
}

/// A number as a user would write it.
pub fn num(v: f64) -> String {
    let s = format!("{v:.6}");
    let s = s.trim_end_matches('0').trim_end_matches('.');
    if s == "-0" {
        "0".into()
    } else {
        s.to_string()
    }
}
