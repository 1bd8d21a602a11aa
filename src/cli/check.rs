//! `nadir check`: load the plant (and optionally cases and a scheme) and print the screening
//! figures from [`nadir::screening`] as tables or JSON.
//!
//! Owns the layout of the screening tables and the rounding shown in them; computes nothing.
//! JSON output is the library's serde form, unrounded.

use super::Outcome;
use nadir::screening::{
    self, CaseFigures, CaseProblem, IslandResponse, Screening, StateFigures, SteadyState,
    TriggerFigure,
};
use std::path::PathBuf;
use tabled::builder::Builder;
use tabled::settings::object::{Columns, Rows};
use tabled::settings::{Alignment, Style, Width};

/// Print screening figures for a plant, its cases and a shedding scheme.
#[derive(Debug, clap::Args)]
pub struct CheckArgs {
    /// Plant file (YAML).
    #[arg(value_name = "PLANT")]
    pub plant: PathBuf,
    /// Scheme file (YAML): adds the load each stage sheds at each operating point.
    #[arg(value_name = "SCHEME")]
    pub scheme: Option<PathBuf>,
    /// Cases file (YAML): adds deficits, initial ROCOF and steady frequency per case.
    #[arg(long, value_name = "CASES")]
    pub cases: Option<PathBuf>,
    /// Output format.
    #[arg(long, value_enum, default_value_t = Format::Table)]
    pub format: Format,
    /// Every column on one line (wider than 120 columns): balance and online MVA per point,
    /// each stage's own MW and cumulative share of the load.
    #[arg(long)]
    pub wide: bool,
}

/// How `check` writes its figures.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum Format {
    /// Plain-text tables.
    Table,
    /// One JSON document.
    Json,
}

/// The last line of every table output.
pub const CAUTION: &str = "Screening figures only; settings must be reviewed by a qualified \
protection engineer, coordinated with the grid operator, and conform to local codes.";

pub fn run(args: CheckArgs) -> anyhow::Result<Outcome> {
    let plant = super::load::plant(&args.plant)?;
    let cases = match &args.cases {
        Some(path) => Some(super::load::cases(path, &plant)?),
        None => None,
    };
    let scheme = match &args.scheme {
        Some(path) => Some(super::load::scheme(path, &plant)?),
        None => None,
    };
    let figures = screening::screen(&plant, cases.as_ref(), scheme.as_ref());
    match args.format {
        Format::Json => super::write_stdout(&(serde_json::to_string_pretty(&figures)? + "\n"))?,
        Format::Table => super::write_stdout(&render_tables(&figures, args.wide))?,
    }
    // Screening checks no criterion, so it has nothing to fail.
    Ok(Outcome::Pass)
}

/// Every table, with titles and the closing caution.
pub fn render_tables(s: &Screening, wide: bool) -> String {
    let mut out = format!(
        "{} — {} Hz\n\nOperating points (utility breaker closed, before any event)\n{}\n",
        s.plant,
        fmt(s.nominal_hz, 0),
        points_table(s, wide)
    );
    if !s.cases.is_empty() {
        out.push_str(&format!(
            "\nCases (no shedding, no protection; ΔP > 0 is a shortage)\n{}\n",
            cases_table(&s.cases, wide)
        ));
    }
    if let Some(scheme) = &s.scheme {
        out.push_str(&format!(
            "\nScheme {} (in order of operation; loads at each point's values)\n{}\n{}",
            scheme.scheme,
            stages_table(scheme, wide),
            super::verify::wrap_text(
                "The cumulative MW counts a load listed in several stages once.",
                "",
                ""
            )
        ));
        for note in &scheme.notes {
            out.push_str(&super::verify::wrap_text(note, "", "  "));
        }
    }
    if !wide {
        out.push_str("--wide shows every column on one line.\n");
    }
    out.push('\n');
    out.push_str(&super::verify::wrap_text(CAUTION, "", ""));
    out
}

fn points_table(s: &Screening, wide: bool) -> String {
    if !wide {
        return narrow_points_table(s);
    }
    let mut b = Builder::default();
    b.push_record([
        "point",
        "island",
        "load MW",
        "gen MW",
        "import MW",
        "balance MW",
        "reserve MW",
        "online MVA",
        "E_k MW·s",
        "H_sys s",
        "sheddable MW",
        "never-shed MW",
    ]);
    for p in &s.operating_points {
        for i in &p.islands {
            b.push_record([
                p.operating_point.clone(),
                island_name(&i.sections, i.on_utility),
                fmt(i.load_mw, 2),
                fmt(i.generation_mw, 2),
                fmt(i.import_mw, 2),
                fmt(i.balance_mw, 2),
                fmt(i.spinning_reserve_mw, 2),
                fmt(i.online_mva, 1),
                fmt(i.generator_energy_mws + i.motor_energy_mws, 1),
                i.h_sys_s.map_or("-".into(), |h| fmt(h, 2)),
                fmt(i.sheddable_mw, 2),
                fmt(i.never_shed_mw, 2),
            ]);
        }
    }
    finish(b, 2..12)
}

/// The operating points in 120 columns: two-line headings, the island's sections over two lines,
/// without the balance (within tolerance at every accepted point) and the online MVA.
fn narrow_points_table(s: &Screening) -> String {
    let mut b = Builder::default();
    b.push_record([
        "point",
        "island",
        "load\nMW",
        "gen\nMW",
        "import\nMW",
        "reserve\nMW",
        "E_k\nMW·s",
        "H_sys\ns",
        "shed-\nable MW",
        "never-\nshed MW",
    ]);
    for p in &s.operating_points {
        for i in &p.islands {
            b.push_record([
                p.operating_point.clone(),
                island_name(&i.sections, i.on_utility).replace(" (utility)", "\n(utility)"),
                fmt(i.load_mw, 2),
                fmt(i.generation_mw, 2),
                fmt(i.import_mw, 2),
                fmt(i.spinning_reserve_mw, 2),
                fmt(i.generator_energy_mws + i.motor_energy_mws, 1),
                i.h_sys_s.map_or("-".into(), |h| fmt(h, 2)),
                fmt(i.sheddable_mw, 2),
                fmt(i.never_shed_mw, 2),
            ]);
        }
    }
    finish(b, 2..10)
}

fn cases_table(cases: &[CaseFigures], wide: bool) -> String {
    let mut rows: Vec<Vec<String>> = vec![[
        "case",
        "point",
        "start",
        "after",
        "island",
        "ΔP MW",
        "E_k MW·s",
        "initial ROCOF Hz/s",
        "steady Hz",
        "note",
    ]
    .map(String::from)
    .to_vec()];
    for c in cases {
        let start = match c.start {
            screening::StartKind::Connected => "connected",
            screening::StartKind::Islanded => "islanded",
        };
        let head = |after: String| {
            vec![
                c.case.clone(),
                c.operating_point.clone(),
                start.to_string(),
                after,
            ]
        };
        if let Some(CaseProblem::IslandedStartShortfall {
            import_mw,
            headroom_mw,
        }) = &c.problem
        {
            let mut row = head("-".into());
            row.extend(["-", "-", "-", "-", "-"].map(String::from));
            row.push(format!(
                "cannot start islanded: import {} MW > headroom {} MW",
                fmt(*import_mw, 2),
                fmt(*headroom_mw, 2)
            ));
            rows.push(row);
            continue;
        }
        let states = [("first", &c.after_first), ("all", &c.after_all)];
        for (label, state) in states {
            let Some(state) = state else { continue };
            let after = format!("{label} (t={} s)", fmt(state.at_s, 1));
            let event_note = state_note(state);
            for (k, island) in state.islands.iter().enumerate() {
                let mut row = head(after.clone());
                row.extend(island_cells(island));
                let mut note = steady_note(&island.steady_state);
                if k == 0 && !event_note.is_empty() {
                    note = join(&[event_note.clone(), note]);
                }
                row.push(note);
                rows.push(row);
            }
        }
        if let Some(p) = &c.utility_profile {
            let mut row = head("profile".into());
            row.extend([
                "utility".into(),
                "-".into(),
                "-".into(),
                "-".into(),
                "-".into(),
            ]);
            let reached = if p.stages_reached.is_empty() {
                "no stage reached".to_string()
            } else {
                format!("stages reached: {}", p.stages_reached.join(", "))
            };
            row.push(format!(
                "grid falls to {} Hz at {} s, at up to {} Hz/s; {reached}",
                fmt(p.min_hz, 2),
                fmt(p.min_at_s, 1),
                fmt(p.max_fall_hz_per_s, 2)
            ));
            rows.push(row);
        }
    }
    if wide {
        let mut b = Builder::default();
        for r in rows {
            b.push_record(r);
        }
        return finish(b, 5..9);
    }
    // In 120 columns: the start beside the point, each case id once and broken at hyphens, the
    // island's "(utility)" and the event time on a second line, the note wrapped.
    let mut b = Builder::default();
    b.push_record([
        "case",
        "point",
        "after",
        "island",
        "ΔP\nMW",
        "E_k\nMW·s",
        "initial\nROCOF\nHz/s",
        "steady\nHz",
        "note",
    ]);
    let mut last_case = String::new();
    for r in rows.into_iter().skip(1) {
        let case = if r[0] == last_case {
            String::new()
        } else {
            last_case = r[0].clone();
            break_at_hyphens(&r[0], 16)
        };
        let point = if r[2] == "islanded" {
            format!("{}\n(islanded)", r[1])
        } else {
            r[1].clone()
        };
        b.push_record([
            case,
            point,
            r[3].replace(" (t=", "\nt=").replace(" s)", " s"),
            r[4].replace(" (utility)", "\n(utility)"),
            r[5].clone(),
            r[6].clone(),
            r[7].clone(),
            r[8].clone(),
            r[9].clone(),
        ]);
    }
    let mut t = b.build();
    t.with(Style::sharp());
    t.modify(Columns::new(4..8), Alignment::right());
    t.modify(Rows::first(), Alignment::left());
    t.modify(Columns::new(8..9), Width::wrap(19).keep_words(true));
    t.to_string()
}

/// An id on lines of at most `width` characters, broken after hyphens where it can be.
fn break_at_hyphens(id: &str, width: usize) -> String {
    let mut out = String::new();
    let mut line = 0;
    for part in id.split_inclusive('-') {
        let n = part.chars().count();
        if line > 0 && line + n > width {
            out.push('\n');
            line = 0;
        }
        out.push_str(part);
        line += n;
    }
    out
}

fn island_cells(i: &IslandResponse) -> Vec<String> {
    let steady = match &i.steady_state {
        SteadyState::Held { hz, .. } => fmt(*hz, 3),
        SteadyState::HeldByUtility => "nominal".into(),
        SteadyState::NotHeld { .. } | SteadyState::RisesPast { .. } | SteadyState::NoGeneration => {
            "-".into()
        }
    };
    vec![
        island_name(&i.sections, i.on_utility),
        if i.on_utility {
            "-".into()
        } else {
            fmt(i.deficit_mw, 2)
        },
        fmt(i.stored_energy_mws, 1),
        i.initial_rocof_hz_per_s.map_or("-".into(), |r| fmt(r, 2)),
        steady,
    ]
}

fn steady_note(s: &SteadyState) -> String {
    match s {
        SteadyState::HeldByUtility => "held by utility".into(),
        SteadyState::Held {
            isochronous: Some(id),
            ..
        } => format!("{id} (isochronous) restores nominal"),
        SteadyState::Held { at_limit, .. } if !at_limit.is_empty() => {
            format!("at limit: {}", at_limit.join(", "))
        }
        SteadyState::Held { .. } => String::new(),
        SteadyState::NotHeld {
            floor_hz,
            available_mw,
        } => format!(
            "no governor can hold it above {} Hz (headroom + relief {} MW)",
            fmt(*floor_hz, 1),
            fmt(*available_mw, 2)
        ),
        SteadyState::RisesPast {
            ceiling_hz,
            available_mw,
        } => format!(
            "rises to above {} Hz: governors lowering output and load relief take up only {} MW there",
            fmt(*ceiling_hz, 1),
            fmt(*available_mw, 2)
        ),
        SteadyState::NoGeneration => "no machine running".into(),
    }
}

fn state_note(s: &StateFigures) -> String {
    let mut parts = Vec::new();
    if !s.tripped_generators.is_empty() {
        parts.push(format!("tripped: {}", s.tripped_generators.join(", ")));
    }
    if !s.dropped_loads.is_empty() {
        parts.push(format!("dropped: {}", s.dropped_loads.join(", ")));
    }
    if s.load_step_mw != 0.0 {
        parts.push(format!("load step {:+.2} MW", s.load_step_mw));
    }
    parts.join("; ")
}

fn stages_table(scheme: &screening::SchemeFigures, wide: bool) -> String {
    let mut b = Builder::default();
    let mut header: Vec<String> = ["stage", "trigger", "delay s", "breaker s", "loads"]
        .map(String::from)
        .to_vec();
    if !wide {
        header = ["stage", "trigger", "delay\ns", "breaker\ns", "loads"]
            .map(String::from)
            .to_vec();
    }
    for (op, load) in scheme.operating_points.iter().zip(&scheme.plant_load_mw) {
        if wide {
            header.push(format!("{op} MW"));
            header.push(format!("{op} cum. MW (% of {})", fmt(*load, 2)));
        } else {
            header.push(format!("{op}\nMW (cum.)"));
        }
    }
    b.push_record(header);
    for st in &scheme.stages {
        let trigger = match &st.trigger {
            TriggerFigure::Frequency {
                pickup_hz,
                min_rocof_hz_per_s: None,
            } => format!("< {} Hz", fmt(*pickup_hz, 2)),
            TriggerFigure::Frequency {
                pickup_hz,
                min_rocof_hz_per_s: Some(r),
            } => format!(
                "< {} Hz and df/dt < -{} Hz/s",
                fmt(*pickup_hz, 2),
                fmt(*r, 2)
            ),
            TriggerFigure::Armed { breaker } => format!("{breaker} opens"),
        };
        let mut row = vec![
            st.stage.clone(),
            trigger,
            fmt(st.delay_s, 2),
            fmt(st.breaker_s, 2),
            st.loads.len().to_string(),
        ];
        for k in 0..scheme.operating_points.len() {
            if wide {
                row.push(fmt(st.mw[k], 2));
                row.push(format!(
                    "{} ({} %)",
                    fmt(st.cumulative_mw[k], 2),
                    fmt(st.cumulative_pct_of_load[k], 1)
                ));
            } else {
                row.push(format!(
                    "{} ({})",
                    fmt(st.mw[k], 2),
                    fmt(st.cumulative_mw[k], 2)
                ));
            }
        }
        b.push_record(row);
    }
    let per_point = if wide { 2 } else { 1 };
    let n = 5 + per_point * scheme.operating_points.len();
    if wide {
        return finish(b, 2..n);
    }
    let mut t = b.build();
    t.with(Style::sharp());
    t.modify(Columns::new(2..n), Alignment::right());
    t.modify(Rows::first(), Alignment::left());
    t.modify(Columns::new(1..2), Width::wrap(18).keep_words(true));
    t.to_string()
}

pub fn finish(b: Builder, numeric: std::ops::Range<usize>) -> String {
    let mut t = b.build();
    t.with(Style::sharp());
    t.modify(Columns::new(numeric), Alignment::right());
    t.modify(Rows::first(), Alignment::left());
    t.to_string()
}

fn island_name(sections: &[String], on_utility: bool) -> String {
    let name = sections.join("+");
    if on_utility {
        format!("{name} (utility)")
    } else {
        name
    }
}

fn join(parts: &[String]) -> String {
    parts
        .iter()
        .filter(|p| !p.is_empty())
        .cloned()
        .collect::<Vec<_>>()
        .join("; ")
}

/// Fixed decimals: the one rounding rule of every printed figure (`report::figures::fixed`). A
/// non-finite figure prints as itself (`NaN`, `inf`), never as the "—" that a table uses for a
/// figure that does not apply, so a numerical fault cannot pass for "never rose".
pub fn fmt(v: f64, decimals: usize) -> String {
    if v.is_finite() {
        nadir::report::figures::fixed(v, decimals)
    } else {
        v.to_string()
    }
}
