//! `nadir report` run for real on the demo: every section, the SHA-256 of each input (computed
//! here independently with `sha2`, FIPS 180-4), the caution, one plot per case, no external
//! resource, overwrite protection, and a render in headless Chromium when one is installed.

use sha2::{Digest, Sha256};
use std::path::{Path, PathBuf};
use std::process::Command;
use std::sync::OnceLock;

struct Run {
    code: i32,
    stdout: String,
    stderr: String,
}

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn scratch_dir(name: &str) -> PathBuf {
    let dir = Path::new(env!("CARGO_TARGET_TMPDIR"))
        .join("report")
        .join(name);
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

const PLANT: &str = "examples/biorefinery/plant.yaml";
const CASES: &str = "examples/biorefinery/cases.yaml";
const SCHEME: &str = "schemes/biorefinery.yaml";
/// 2024-03-01 12:00:00 UTC, so the report does not depend on the clock.
const EPOCH: &str = "1709294400";

fn report(out: &Path, extra: &[&str]) -> Run {
    let mut args = vec![
        "report",
        PLANT,
        SCHEME,
        "--cases",
        CASES,
        "-o",
        out.to_str().unwrap(),
    ];
    args.extend_from_slice(extra);
    let o = Command::new(env!("CARGO_BIN_EXE_nadir"))
        .args(&args)
        .current_dir(root())
        .env("SOURCE_DATE_EPOCH", EPOCH)
        .output()
        .expect("the nadir binary runs");
    Run {
        code: o.status.code().unwrap_or(-1),
        stdout: String::from_utf8_lossy(&o.stdout).into_owned(),
        stderr: String::from_utf8_lossy(&o.stderr).into_owned(),
    }
}

/// The demo report, made once for every test that only reads it.
fn demo() -> &'static (PathBuf, String) {
    static DEMO: OnceLock<(PathBuf, String)> = OnceLock::new();
    DEMO.get_or_init(|| {
        let path = scratch_dir("demo").join("report.html");
        let r = report(&path, &[]);
        assert_eq!(r.code, 0, "stdout: {}\nstderr: {}", r.stdout, r.stderr);
        assert!(r.stdout.contains("Report written to"), "{}", r.stdout);
        let html = std::fs::read_to_string(&path).expect("report written");
        (path, html)
    })
}

fn sha256_of(path: &str) -> String {
    let bytes = std::fs::read(root().join(path)).unwrap();
    Sha256::digest(&bytes)
        .iter()
        .map(|b| format!("{b:02x}"))
        .collect()
}

#[test]
fn the_demo_report_has_every_section_and_identifies_its_inputs() {
    let (_, html) = demo();
    for needle in [
        "<!DOCTYPE html>",
        "Marsh Hollow Biorefinery (fictional)",
        "Marsh Hollow first table (fictional)",
        "2024-03-01 12:00:00 UTC",
        concat!("nadir ", env!("CARGO_PKG_VERSION")),
        "<h2>Inputs</h2>",
        "Verdict: the table holds every case.",
        "All twelve case × operating-point runs hold every criterion",
        "<h2>Plant</h2>",
        "Operating points, before any event",
        "H_sys s",
        "Acceptance criteria",
        "<h2>Shedding table, in operating order</h2>",
        "hammer-mill-1 (6)",
        "<h2>Audit against the plant's own rules</h2>",
        "Violations: none.",
        "<h2>Verification matrix</h2>",
        "disturbance ×",
        "model error %",
        "failed criterion",
        "<h2>Frequency after each case</h2>",
        "Each line is one island's frequency at one operating point",
        "<nav class=\"toc\">",
        "<div id=\"warnings\">",
        "<h2>Relay setting sheet</h2>",
        "<td>df/dt supervision</td>",
        "<h2>Review and sign-off</h2>",
        "Reviewed by (name)",
        "Signature",
    ] {
        assert!(html.contains(needle), "missing {needle:?}");
    }
    for file in [PLANT, CASES, SCHEME] {
        let digest = sha256_of(file);
        assert!(html.contains(&digest), "no SHA-256 {digest} of {file}");
        let size = std::fs::metadata(root().join(file)).unwrap().len();
        assert!(html.contains(&format!(">{size}</td>")), "no size of {file}");
    }
    assert!(html.contains(
        "settings must be reviewed by a qualified protection engineer, coordinated with the grid \
operator, and conform to local codes"
    ));
}

#[test]
fn one_plot_per_case_and_nothing_to_fetch() {
    let (_, html) = demo();
    let cases = std::fs::read_to_string(root().join(CASES)).unwrap();
    let n_cases = cases.matches("\n  - id: ").count();
    assert_eq!(n_cases, 7);
    assert_eq!(html.matches("<svg").count(), n_cases);
    assert_eq!(html.matches("</svg>").count(), n_cases);
    // The only URL allowed is the SVG namespace, which is a name, not something to fetch.
    let without_ns = html.replace("xmlns=\"http://www.w3.org/2000/svg\"", "");
    assert!(
        !without_ns.contains("http"),
        "an external URL in the report"
    );
    for tag in ["<script", "<link", "<img", "@import", "url("] {
        assert!(!html.contains(tag), "{tag} in a self-contained report");
    }
    // Every operating point of the first case (it applies to all three) is a line in its plot.
    let first = &html[html.find("<figure").unwrap()..html.find("</figure>").unwrap()];
    for point in ["full-rate", "turndown", "stg-1-maintenance"] {
        assert!(
            first.contains(&format!("data-label=\"{point}, island mv-a+mv-b\"")),
            "{point}"
        );
    }
    assert!(first.contains("uf-1, uf-1-a 49 Hz") && first.contains("minimum 47.5 Hz"));
    // After the bus split each island is its own line (the over-frequency one included).
    let split = &html[html.find("<h3>bus-split-islanded</h3>").unwrap()..];
    let split = &split[..split.find("</figure>").unwrap()];
    assert!(split.contains("data-label=\"turndown, island mv-a\""));
    assert!(split.contains("data-label=\"turndown, island mv-b\""));
    assert!(split.contains("peak 50.39 Hz"));
}

/// The report-size ceiling of issue 13 for the demo (twelve runs): under 400 KB.
#[test]
fn the_demo_report_is_under_400_kb() {
    let (path, _) = demo();
    let size = std::fs::metadata(path).unwrap().len();
    assert!(size < 400_000, "the demo report is {size} bytes");
}

/// The warnings box comes before the verdict, the contents before both.
#[test]
fn contents_then_warnings_then_verdict() {
    let (_, html) = demo();
    let toc = html.find("<nav class=\"toc\">").unwrap();
    let warnings = html.find("<div id=\"warnings\">").unwrap();
    let verdict = html.find("<section class=\"verdict").unwrap();
    assert!(toc < warnings && warnings < verdict);
    for anchor in [
        "#verdict",
        "#sheet",
        "#matrix",
        "#case-1",
        "#case-7",
        "#sign-off",
    ] {
        let id = &anchor[1..];
        assert!(html.contains(&format!("href=\"{anchor}\"")), "{anchor}");
        assert!(html.contains(&format!("id=\"{id}\"")), "{id}");
    }
}

/// Input paths given as absolute paths are shown relative to the working directory.
#[test]
fn input_paths_are_relative_to_the_working_directory() {
    let out = scratch_dir("relative").join("r.html");
    let abs = |p: &str| root().join(p).to_str().unwrap().to_string();
    let o = Command::new(env!("CARGO_BIN_EXE_nadir"))
        .args([
            "report",
            &abs(PLANT),
            &abs(SCHEME),
            "--cases",
            &abs(CASES),
            "-o",
        ])
        .arg(&out)
        .current_dir(root().join("examples"))
        .env("SOURCE_DATE_EPOCH", EPOCH)
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let html = std::fs::read_to_string(&out).unwrap();
    assert!(html.contains("<td>biorefinery/plant.yaml</td>"));
    assert!(html.contains("<td>../schemes/biorefinery.yaml</td>"));
    let here = root();
    assert!(
        !html.contains(here.to_str().unwrap()),
        "an absolute path in the report"
    );
}

#[test]
fn an_existing_report_is_kept_unless_forced() {
    let dir = scratch_dir("overwrite");
    let path = dir.join("report.html");
    std::fs::write(&path, b"an older report").unwrap();
    let r = report(&path, &[]);
    assert_eq!(r.code, 2, "stdout: {}\nstderr: {}", r.stdout, r.stderr);
    assert!(
        r.stderr.contains("already exists; pass --force"),
        "{}",
        r.stderr
    );
    assert_eq!(std::fs::read(&path).unwrap(), b"an older report");

    let r = report(&path, &["--force"]);
    assert_eq!(r.code, 0, "stderr: {}", r.stderr);
    let html = std::fs::read_to_string(&path).unwrap();
    assert!(html.starts_with("<!DOCTYPE html>"));
    // Same inputs and the same stated time give the same bytes.
    assert_eq!(&html, &demo().1);
}

#[test]
fn a_failing_table_still_gets_its_report_and_exit_code_1() {
    let dir = scratch_dir("failing");
    let path = dir.join("report.html");
    // The proposal with a smaller 49.0 Hz step fails one case (README, `nadir compare`).
    let o = Command::new(env!("CARGO_BIN_EXE_nadir"))
        .args([
            "report",
            PLANT,
            "schemes/biorefinery-proposed.yaml",
            "--cases",
            CASES,
            "-o",
            path.to_str().unwrap(),
        ])
        .current_dir(root())
        .env("SOURCE_DATE_EPOCH", EPOCH)
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(1));
    let html = std::fs::read_to_string(&path).unwrap();
    assert!(html.contains("the table DOES NOT hold"));
    assert!(html.contains("One of twelve case × operating-point runs FAIL (eleven pass)"));
    assert!(html.contains("<tr class=\"fail\">"));
    assert!(html.contains(">FAIL</td>"));
    assert!(html.contains("holds only up to 1.08× its disturbance; 1.20× is required"));
}

#[test]
fn bad_input_is_exit_2_and_writes_nothing() {
    let dir = scratch_dir("bad");
    let plant = dir.join("plant.yaml");
    std::fs::write(&plant, "plant:\n  nominal_hz: fifty\n").unwrap();
    let out = dir.join("report.html");
    let o = Command::new(env!("CARGO_BIN_EXE_nadir"))
        .args([
            "report",
            plant.to_str().unwrap(),
            SCHEME,
            "--cases",
            CASES,
            "-o",
        ])
        .arg(&out)
        .current_dir(root())
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("reading plant file"));
    assert!(!out.exists());
}

/// Renders the demo report in headless Chromium (scripts/render-report.sh) and checks that a
/// picture and a PDF came out. Skipped, with a note, where no Chromium is installed.
#[test]
fn the_demo_report_renders_in_headless_chromium() {
    let has_chromium = ["chromium", "chromium-browser", "google-chrome"]
        .iter()
        .any(|b| {
            Command::new("sh")
                .args(["-c", &format!("command -v {b}")])
                .output()
                .is_ok_and(|o| o.status.success())
        });
    if !has_chromium {
        eprintln!("skipped: no chromium installed; the report was not rendered");
        return;
    }
    let (path, _) = demo();
    let dir = path.parent().unwrap();
    let png = dir.join("report.png");
    let pdf = dir.join("report.pdf");
    let o = Command::new("bash")
        .arg(root().join("scripts/render-report.sh"))
        .args([path, &png, &pdf])
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let png_bytes = std::fs::read(&png).unwrap();
    assert_eq!(&png_bytes[..8], b"\x89PNG\r\n\x1a\n");
    // IHDR width, big-endian, at bytes 16..20: the window is 1280 wide.
    assert_eq!(
        u32::from_be_bytes(png_bytes[16..20].try_into().unwrap()),
        1280
    );
    let pdf_bytes = std::fs::read(&pdf).unwrap();
    assert!(pdf_bytes.starts_with(b"%PDF-"));
}
