//! `nadir audit`: the shedding order stage by stage, every violation of the plant's own rules and
//! the notes; exit 1 when any rule is broken (notes alone exit 0). The findings come from
//! `verify::audit::audit_cases`, the same function the report calls.

use super::check::{finish, fmt};
use super::{load, Outcome};
use nadir::verify::audit::{self, Audit, AuditRules};
use std::path::PathBuf;
use tabled::builder::Builder;

/// Check a shedding table against the plant's own rules, without simulating.
#[derive(Debug, clap::Args)]
pub struct AuditArgs {
    /// Plant file (YAML).
    #[arg(value_name = "PLANT")]
    pub plant: PathBuf,
    /// Scheme file (YAML).
    #[arg(value_name = "SCHEME")]
    pub scheme: PathBuf,
    /// Cases file (YAML): rank order is judged in each event of these cases (which breakers open
    /// together, which islands form). Without it, each breaker is taken as opening alone.
    #[arg(long, value_name = "CASES")]
    pub cases: Option<PathBuf>,
    /// Output format.
    #[arg(long, value_enum, default_value_t = super::check::Format::Table)]
    pub format: super::check::Format,
}

pub fn run(args: AuditArgs) -> anyhow::Result<Outcome> {
    let plant = load::plant(&args.plant)?;
    let cases = match &args.cases {
        Some(path) => Some(load::cases(path, &plant)?),
        None => None,
    };
    let scheme = load::scheme(&args.scheme, &plant)?;
    let rules = AuditRules::for_plant(&plant);
    let a = audit::audit_cases(&plant, &scheme, cases.as_ref(), &rules);
    let text = match args.format {
        super::check::Format::Json => serde_json::to_string_pretty(&a)? + "\n",
        super::check::Format::Table => render(&a, &scheme.name, &rules),
    };
    super::write_stdout(&text)?;
    Ok(if a.violations.is_empty() {
        Outcome::Pass
    } else {
        Outcome::Fail
    })
}

/// The order table, the rules, then the violations (or a line saying there are none) and notes.
pub fn render(a: &Audit, scheme: &str, rules: &AuditRules) -> String {
    let mut out =
        format!("Shedding order of {scheme} (armed stages first, then by falling pickup)\n");
    out.push_str(&order_table(a));
    out.push_str(&format!(
        "\nRules: {}.\nRank order judged in {}.\n",
        rules.statement(),
        a.rank_order_judged_in
    ));
    if a.violations.is_empty() {
        out.push_str("No violation.\n");
    } else {
        out.push_str(&format!("{} violation(s):\n", a.violations.len()));
        for v in &a.violations {
            out.push_str(&format!("  [{}] {}\n", v.rule, v.message));
        }
    }
    if !a.notes.is_empty() {
        out.push_str(&format!("{} note(s), not violations:\n", a.notes.len()));
        for n in &a.notes {
            out.push_str(&format!("  [{}] {}\n", n.rule, n.message));
        }
    }
    out
}

/// The shedding order as a table: stage, trigger, delay, loads with ranks, cumulative MW per point.
pub fn order_table(a: &Audit) -> String {
    let mut b = Builder::default();
    let mut header = vec![
        "stage".to_string(),
        "trigger".into(),
        "delay s".into(),
        "loads (rank)".into(),
    ];
    for op in &a.operating_points {
        header.push(format!("{op} MW (cum.)"));
    }
    b.push_record(header);
    for s in &a.order {
        let mut row = vec![
            s.id.clone(),
            s.trigger.clone(),
            fmt(s.delay_s, 2),
            s.loads
                .iter()
                .map(|(id, r)| format!("{id} ({r})"))
                .collect::<Vec<_>>()
                .join(", "),
        ];
        for (mw, cum) in s.mw.iter().zip(&s.cumulative_mw) {
            row.push(format!("{} ({})", fmt(*mw, 2), fmt(*cum, 2)));
        }
        b.push_record(row);
    }
    let n = 4 + a.operating_points.len();
    finish(b, 4..n) + "\n"
}
