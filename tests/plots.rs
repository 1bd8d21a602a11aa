//! `nadir replay --plot` run for real on the demo, the SVG parsed as XML: every island's line, each
//! limit, each event marker, each stage's pickup label, nadir and peak labels, a stage that did not
//! operate with its reason, shed labels, undervoltage drop-outs and the voltage panel; a .png plot
//! is a PNG that decodes; other extensions are refused before any work.

mod binary;

use binary::nadir;
use std::path::PathBuf;

const PLANT: &str = "examples/biorefinery/plant.yaml";
const CASES: &str = "examples/biorefinery/cases.yaml";
const SCHEME: &str = "schemes/biorefinery.yaml";

fn scratch(name: &str) -> PathBuf {
    let dir = PathBuf::from(env!("CARGO_TARGET_TMPDIR")).join("plots");
    std::fs::create_dir_all(&dir).unwrap();
    let path = dir.join(name);
    let _ = std::fs::remove_file(&path);
    path
}

/// Replay `case` at `point` with `--plot FILE` and return the file's bytes.
fn plot(case: &str, point: &str, file: &str) -> Vec<u8> {
    let out = scratch(file);
    let r = nadir(&[
        "replay",
        PLANT,
        SCHEME,
        "--cases",
        CASES,
        "--case",
        case,
        "--at",
        point,
        "--plot",
        out.to_str().unwrap(),
    ]);
    assert_eq!(r.code, 0, "{}\n{}", r.stdout, r.stderr);
    assert!(r.stdout.contains("Plot written to"), "{}", r.stdout);
    std::fs::read(&out).unwrap()
}

/// Everything the SVG says in words: each text element's content, with the classes of its
/// enclosing groups.
struct Drawn {
    texts: Vec<(String, Vec<String>)>,
    trace_labels: Vec<String>,
}

fn parse(svg: &[u8]) -> Drawn {
    let text = std::str::from_utf8(svg).unwrap();
    let doc = roxmltree::Document::parse(text).expect("the plot is well-formed XML");
    assert_eq!(doc.root_element().tag_name().name(), "svg");
    let mut texts = Vec::new();
    let mut trace_labels = Vec::new();
    for node in doc.descendants() {
        if node.has_tag_name("text") {
            let classes = node
                .ancestors()
                .filter_map(|a| a.attribute("class"))
                .map(String::from)
                .collect();
            // A label in several lines (tspans) reads as one, lines joined by a space.
            let text: Vec<&str> = node
                .descendants()
                .filter(|n| n.is_text())
                .filter_map(|n| n.text())
                .collect();
            texts.push((text.join(" "), classes));
        }
        if node.has_tag_name("g") && node.attribute("class") == Some("trace") {
            // A trace is a group holding a non-empty polyline.
            let points = node
                .children()
                .find(|c| c.has_tag_name("polyline"))
                .and_then(|p| p.attribute("points"))
                .unwrap_or("");
            assert!(points.split(' ').count() > 20, "a trace with data");
            trace_labels.push(node.attribute("data-label").unwrap().to_string());
        }
    }
    Drawn {
        texts,
        trace_labels,
    }
}

impl Drawn {
    /// The text of a label in a group of class `class` that starts with `start`.
    fn label(&self, class: &str, start: &str) -> Option<&str> {
        self.texts
            .iter()
            .find(|(t, c)| {
                t.starts_with(start) && c.iter().any(|k| k.split(' ').any(|w| w == class))
            })
            .map(|(t, _)| t.as_str())
    }
    fn has_text(&self, start: &str) -> bool {
        self.texts.iter().any(|(t, _)| t.starts_with(start))
    }
}

/// The pickup label of every frequency stage of the demo scheme, read with the library: stages
/// with the same pickup and supervision share one line, their ids joined.
fn pickups() -> Vec<String> {
    use nadir::model::StageTrigger;
    let root = binary::root();
    let plant = nadir::input::load_plant(&root.join(PLANT)).unwrap();
    let scheme = nadir::input::load_scheme(&root.join(SCHEME), &plant).unwrap();
    let mut out: Vec<(f64, Option<f64>, String)> = Vec::new();
    for s in &scheme.stages {
        if let StageTrigger::Frequency {
            pickup_hz,
            min_rocof_hz_per_s,
        } = s.trigger
        {
            match out
                .iter_mut()
                .find(|o| o.0 == pickup_hz && o.1 == min_rocof_hz_per_s)
            {
                Some(o) => o.2 = format!("{}, {}", o.2, s.id),
                None => out.push((pickup_hz, min_rocof_hz_per_s, s.id.clone())),
            }
        }
    }
    assert!(
        out.len() >= 7,
        "the demo has frequency stages at seven pickups"
    );
    out.into_iter()
        .map(|(hz, rate, ids)| match rate {
            Some(r) => format!("{ids} {hz} Hz if df/dt ≤ −{r} Hz/s"),
            None => format!("{ids} {hz} Hz"),
        })
        .collect()
}

#[test]
fn a_bus_split_draws_both_islands_with_their_extremes_and_every_limit() {
    let d = parse(&plot("bus-split-islanded", "turndown", "split.svg"));
    assert_eq!(d.trace_labels, ["island mv-a", "island mv-b"]);
    // Limits from the demo plant's criteria block (47.5 and 51.5 Hz, recovery 49.5 Hz).
    assert!(d.label("min", "minimum 47.5 Hz").is_some());
    assert!(d.label("max", "maximum 51.5 Hz").is_some());
    assert!(d.label("recovery", "recovery 49.5 Hz").is_some());
    // The recovery deadline: the last event (0 s) plus the plant's 10 s.
    assert!(d.label("deadline", "recover by 10 s").is_some());
    for p in pickups() {
        assert!(d.label("pickup", &p).is_some(), "no pickup label {p:?}");
    }
    assert!(d.label("event", "bus-tie opens").is_some());
    // The over-frequency island's peak (the 50.39 Hz of the verification matrix) and the other's nadir.
    assert!(d.has_text("peak 50.39 Hz at "), "{:?}", d.texts);
    assert!(d.has_text("nadir 49.21 Hz at 1.24 s"));
    assert!(d.has_text("no load shed"));
    // The legend names each island and the time-axis method.
    assert!(d.label("legend", "island mv-a").is_some());
    assert!(d.has_text("time (s); shaded: the first 5 s after each event, drawn "));
}

#[test]
fn events_armed_trips_stage_steps_and_a_supervised_stage_that_did_not_operate() {
    let d = parse(&plot(
        "utility-loss-then-engine-trip",
        "full-rate",
        "two.svg",
    ));
    assert_eq!(d.trace_labels, ["island mv-a+mv-b"]);
    assert!(d.label("event", "utility opens").is_some());
    assert!(d.label("event", "bge-1 trips").is_some());
    assert!(d.label("event", "armed-utility (armed) trips").is_some());
    assert!(d.label("shed", "armed-utility 1.65 MW").is_some());
    // uf-1 opens the hammer mills (2.0 MW) and dryer 1's heaters (0.6 MW; its fans went with the
    // armed stage); uf-1-a chip-conveyors (0.6 MW): schemes/biorefinery.yaml.
    assert!(d.label("shed", "uf-1 2.6 MW").is_some());
    assert!(d.label("shed", "uf-1-a 0.6 MW").is_some());
    // The df/dt-supervised stages (49.2 Hz, df/dt ≤ −1 Hz/s) are crossed on the slow fall after
    // the engine trips and do not operate: the plot says why.
    assert_eq!(
        d.label("idle", "uf-fast"),
        Some("uf-fast-a, uf-fast-b no trip: fell slower than 1 Hz/s (df/dt supervision)")
    );
    assert!(d.has_text("nadir 49.00 Hz at 14.73 s"));
    for p in pickups() {
        assert!(d.label("pickup", &p).is_some(), "no pickup label {p:?}");
    }
}

#[test]
fn a_dip_case_has_a_voltage_panel_and_undervoltage_drop_outs() {
    let d = parse(&plot("voltage-dip-mv-b", "full-rate", "dip.svg"));
    assert!(d
        .label("event", "mv-b dips to 0.35 pu for 0.25 s")
        .is_some());
    assert!(d.label("voltage", "mv-b (lowest 0.35 pu)").is_some());
    assert!(d
        .label("shed-uv", "hammer-mill-1 drops out (UV) 1 MW")
        .is_some());
    assert!(d.label("legend", "undervoltage drop-out").is_some());
    assert!(d.has_text("voltage (pu)"));
    // A case without a dip has no voltage panel.
    let plain = parse(&plot("utility-loss", "full-rate", "plain.svg"));
    assert!(!plain.has_text("voltage (pu)"));
}

#[test]
fn a_png_plot_is_a_png_that_decodes() {
    let bytes = plot("utility-loss", "turndown", "plot.png");
    // PNG signature (ISO/IEC 15948:2004, 5.2).
    assert_eq!(&bytes[..8], b"\x89PNG\r\n\x1a\n");
    let pixmap = resvg::tiny_skia::Pixmap::decode_png(&bytes).expect("decodes");
    // The SVG is 1000 units wide and drawn at two pixels per unit.
    assert_eq!(pixmap.width(), 2000);
    assert!(pixmap.height() > 1000);
    // Not blank: a good share of the pixels are not white.
    let inked = pixmap
        .pixels()
        .iter()
        .filter(|p| p.red() < 200 || p.green() < 200 || p.blue() < 200)
        .count();
    assert!(inked > 20_000, "{inked} inked pixels");
    // Upper-case extension too.
    let upper = plot("utility-loss", "turndown", "PLOT.PNG");
    assert_eq!(&upper[..8], b"\x89PNG\r\n\x1a\n");
}

#[test]
fn other_plot_extensions_are_refused_before_any_work() {
    for name in ["plot.jpg", "plot.pdf", "plot.svg.txt"] {
        let out = scratch(name);
        let r = nadir(&[
            "replay",
            PLANT,
            SCHEME,
            "--cases",
            CASES,
            "--case",
            "utility-loss",
            "--plot",
            out.to_str().unwrap(),
        ]);
        assert_eq!(r.code, 2, "{name}: {}", r.stdout);
        assert!(
            r.stderr.contains("a plot is written as .svg or .png"),
            "{}",
            r.stderr
        );
        assert!(r.stdout.is_empty(), "nothing was replayed: {}", r.stdout);
        assert!(!out.exists());
    }
}
