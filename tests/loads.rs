//! `nadir loads import` / `nadir loads export`: the load list from a spreadsheet and back.
//! Behaviour tests (round trip, messages, limits, never writing over an input); the load-type
//! exponents are checked against their source in `src/input/load_list/types.rs`.

use nadir::input::load_list::{self, Imported};
use nadir::input::{limits, parse_plant, Diagnostic, Limits};
use std::path::{Path, PathBuf};
use std::process::Command;

fn demo_text() -> String {
    std::fs::read_to_string(
        Path::new(env!("CARGO_MANIFEST_DIR")).join("examples/biorefinery/plant.yaml"),
    )
    .unwrap()
}

/// The demo plant with `import_mw: balance`, so that any list of loads balances.
fn balanced_text() -> String {
    demo_text()
        .lines()
        .filter(|l| !l.starts_with("    import_mw:"))
        .map(|l| {
            if l.starts_with("  import_mw:") {
                "  import_mw: balance".to_string()
            } else {
                l.to_string()
            }
        })
        .collect::<Vec<_>>()
        .join("\n")
}

fn import(plant: &str, list: &str) -> Result<Imported, Vec<Diagnostic>> {
    load_list::import(plant, "plant.yaml", list, "list.csv", &Limits::defaults())
}

fn errors(plant: &str, list: &str) -> Vec<String> {
    import(plant, list)
        .expect_err("the list is refused")
        .iter()
        .map(|d| d.to_string())
        .collect()
}

fn has(list: &[String], needle: &str) {
    assert!(
        list.iter().any(|d| d.contains(needle)),
        "no message contains {needle:?}:\n{}",
        list.join("\n")
    );
}

#[test]
fn export_then_import_gives_the_same_plant() {
    let text = demo_text();
    let plant = parse_plant(&text, "plant.yaml").unwrap();
    let csv = nadir::report::load_list::csv(&plant);
    let back = import(&text, &csv).unwrap();
    assert_eq!(back.plant.value, plant);
    // The written file is read unchanged by the plant reader, and exports to the same bytes.
    let reread = parse_plant(&back.text, "new.yaml").unwrap();
    assert_eq!(reread, plant);
    assert_eq!(nadir::report::load_list::csv(&reread), csv);
    // Every line outside the loads block is kept.
    let kept = |t: &str| {
        t.lines()
            .filter(|l| !l.starts_with("  - {") && !l.starts_with("# Loads imported"))
            .map(str::to_string)
            .collect::<Vec<_>>()
    };
    assert_eq!(kept(&back.text), kept(&text));
}

#[test]
fn round_trip_keeps_awkward_text_and_numbers() {
    let list =
        "id,section,p_mw,rank,never_shed,freq_exp,inertia_s,uv_below_pu,uv_after_s,description\n\
                \"1\",mv-a,0.1,1,no,-1,,,,\"=SUM(A1), \"\"quoted\"\"\"\n\
                yes,mv-b,1e-3,2,yes,0.53,0.35,0.7,0.1,-spare\n\
                \"x: y\",mv-a,0.30000000000000004,3,no,,,,,\n";
    let first = import(&balanced_text(), list).unwrap();
    let p = &first.plant.value;
    assert_eq!(p.loads[0].id, "1");
    assert_eq!(p.loads[0].description, "=SUM(A1), \"quoted\"");
    assert_eq!(p.loads[0].freq_exp, -1.0);
    assert_eq!(p.loads[1].id, "yes");
    assert_eq!(p.loads[1].description, "-spare");
    assert_eq!(p.loads[2].p_mw, 0.30000000000000004);
    let csv = nadir::report::load_list::csv(p);
    // A spreadsheet must not run the description: it is exported with an apostrophe.
    assert!(csv.contains("\"'=SUM(A1), \"\"quoted\"\"\""), "{csv}");
    let second = import(&balanced_text(), &csv).unwrap();
    assert_eq!(second.plant.value, *p);
}

#[test]
fn headers_are_matched_whatever_their_case_and_a_bom_and_semicolons_are_read() {
    let list = "\u{feff}ID;Section;MW;RANK;Never Shed;Load-Type\r\n\
                pump-1;mv-a;0.5;1;;Industrial Motor\r\n\
                ups-1;mv-b;0.2;2;YES;constant_power\r\n";
    let got = import(&balanced_text(), list).unwrap();
    let loads = &got.plant.value.loads;
    assert_eq!(loads.len(), 2);
    assert_eq!(loads[0].freq_exp, 2.5);
    assert!(loads[1].never_shed);
    assert_eq!(got.typed, 2);
    // The exponent's source is written beside it.
    assert!(got
        .text
        .contains("# industrial-motor: k = 2.5, Kundur (1994) Table 7.1"));
    // Tabs too.
    let tabbed = "id\tsection\tp_mw\trank\np\tmv-a\t1\t1\n";
    assert_eq!(
        import(&balanced_text(), tabbed)
            .unwrap()
            .plant
            .value
            .loads
            .len(),
        1
    );
}

#[test]
fn every_bad_cell_is_reported_at_once_with_its_row_and_column() {
    let list = "id,section,MW,rank,never_shed,load_type,freq_exp,uv_below_pu,uv_after_s\n\
                a,mv-a,\"1,2\",1,,,,,\n\
                b,mv-a,0.5,x,maybe,fan,,,\n\
                ,mv-a,0.5,3,,,,,\n\
                d,mv-a,0.5 MW,4,,,inf,,\n\
                e,mv-a,0.5,5,,fan motor,2.5,,\n\
                f,mv-a,0.5,6,,,,0.8,\n\
                g,mv-a,0.5,7,,,,,,extra\n";
    let e = errors(&balanced_text(), list);
    has(&e, "list.csv:2:3: MW (column C): `1,2` is not a number");
    has(&e, "write the number with a decimal point, `1.2`");
    has(
        &e,
        "list.csv:3:4: rank (column D): `x` is not a whole number from 1",
    );
    has(
        &e,
        "list.csv:3:5: never_shed (column E): `maybe` is not yes or no",
    );
    has(
        &e,
        "list.csv:3:6: load_type (column F): `fan` is not a load type nadir knows",
    );
    has(&e, "list.csv:4:1: id (column A): the cell is empty");
    has(&e, "list.csv:5:3: MW (column C): `0.5 MW` is not a number");
    has(
        &e,
        "list.csv:5:7: freq_exp (column G): `inf` is not a number",
    );
    has(
        &e,
        "list.csv:6:7: freq_exp (column G): the exponent 2.5 disagrees with load type `fan-motor`",
    );
    has(
        &e,
        "list.csv:7:9: uv_after_s (column I): the cell is empty while `uv_below_pu` is given",
    );
    has(
        &e,
        "list.csv:8:10: the row has 10 cells but the header names 9 columns",
    );
    // In row order.
    let lines: Vec<usize> = import(&balanced_text(), list)
        .unwrap_err()
        .iter()
        .filter_map(|d| d.line)
        .collect();
    assert!(lines.windows(2).all(|w| w[0] <= w[1]), "{lines:?}");
}

#[test]
fn values_the_plant_reader_refuses_are_placed_at_the_row() {
    let list = "id,section,p_mw,rank,freq_exp,inertia_s\n\
                a,mv-a,1,1,,\n\
                a,mv-b,1,2,,\n\
                c,mv-z,1,3,,\n\
                d,mv-a,-1,4,,\n\
                e,mv-a,1,0,,\n\
                f,mv-a,1,5,9,\n\
                g,mv-a,1,6,,40\n\
                h,mv-a,\"1,5\",7,,\n";
    let e = errors(&balanced_text(), list);
    // Row 9's cell does not read, and the rows that do are still judged.
    has(&e, "list.csv:9:3");
    has(&e, "list.csv:3:1: id (column A)");
    has(&e, "list.csv:4:2: section (column B)");
    has(&e, "mv-z");
    has(&e, "list.csv:5:3: p_mw (column C)");
    has(
        &e,
        "list.csv:6:4: rank (column D): rank of load `e` is 0; ranks start at 1",
    );
    has(&e, "list.csv:7:5: freq_exp (column E)");
    has(&e, "list.csv:8:6: inertia_s (column F)");
    assert!(e.iter().all(|d| d.starts_with("list.csv")), "{e:?}");
}

#[test]
fn headers_that_cannot_be_read_are_refused_with_their_fix() {
    let e = errors(&demo_text(), "id,section,p_kW,rank,priority,id\n");
    has(
        &e,
        "list.csv:1:3: p_kW (column C): `p_kW` is not a column nadir reads",
    );
    has(&e, "convert the column to MW");
    has(&e, "list.csv:1:5: priority (column E)");
    has(&e, "rank 1 is shed first");
    has(
        &e,
        "list.csv:1:6: id (column F): `id` means the same as `id` in column A",
    );
    has(&e, "the header row has no `p_mw` column");
    has(
        &errors(&demo_text(), ""),
        "list.csv: the load list is empty",
    );
    has(&errors(&demo_text(), "\n\n"), "the load list is empty");
    has(
        &errors(&demo_text(), "id,section,p_mw,rank\n"),
        "list.csv:1: the load list has a header row but no loads",
    );
    has(
        &errors(&demo_text(), "id|section|p_mw|rank\na|mv-a|1|1\n"),
        "the header row is one cell",
    );
    has(
        &errors(&demo_text(), "id,section,p_mw,rank,uv_below_pu\n"),
        "needs both `uv_below_pu` and `uv_after_s`",
    );
}

#[test]
fn a_list_in_kw_is_named_against_the_plant_files_own_loads() {
    let text = demo_text();
    let plant = parse_plant(&text, "plant.yaml").unwrap();
    let csv = nadir::report::load_list::csv(&plant).replacen(
        "office-hvac,mv-a,0.35",
        "office-hvac,mv-a,350",
        1,
    );
    let e = errors(&text, &csv);
    has(&e, "does not balance");
    has(&e, "row 2 `office-hvac` 350 MW (the plant file has 0.35 MW): if these are in kW, divide them by 1000");
}

#[test]
fn a_plant_file_without_a_loads_block_is_named() {
    let e = errors(
        "plant: { name: x, nominal_hz: 50 }\n",
        "id,section,p_mw,rank\na,main,1,1\n",
    );
    has(&e, "no line starting with `loads:`");
}

#[test]
fn a_huge_list_is_refused_at_the_load_limit() {
    let mut list = String::from("id,section,p_mw,rank\n");
    for i in 0..5000 {
        list.push_str(&format!("l{i},mv-a,0.001,{}\n", i + 1));
    }
    let lim = Limits::defaults().with(limits::LOADS, 100);
    let e = load_list::import(&balanced_text(), "plant.yaml", &list, "list.csv", &lim).unwrap_err();
    assert_eq!(e.len(), 1, "{e:?}");
    assert_eq!(e[0].line, Some(102));
    assert!(e[0]
        .to_string()
        .contains("more than 100 loads, above the limit max_loads = 100"));
    assert!(e[0].to_string().contains("NADIR_MAX_LOADS"));
    // Mistakes are capped too: 5000 bad rows give the first 1000 and a count of the rest.
    let bad: String = std::iter::once("id,section,p_mw,rank\n".to_string())
        .chain((0..1999).map(|i| format!("l{i},mv-a,x,{}\n", i + 1)))
        .collect();
    let e = import(&balanced_text(), &bad).unwrap_err();
    assert_eq!(e.len(), limits::MAX_DIAGNOSTICS + 1);
    assert!(
        e.last()
            .unwrap()
            .message
            .contains("999 more mistake(s) not shown"),
        "{:?}",
        e.last()
    );
}

// ------------------------------------------------------------------- the verb

fn nadir(dir: &Path, args: &[&str]) -> std::process::Output {
    Command::new(env!("CARGO_BIN_EXE_nadir"))
        .current_dir(dir)
        .args(args)
        .output()
        .unwrap()
}

fn scratch(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("nadir-loads-{name}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap();
    std::fs::write(d.join("plant.yaml"), demo_text()).unwrap();
    d
}

#[test]
fn the_verbs_round_trip_and_never_write_over_an_input() {
    let d = scratch("verb");
    let out = nadir(&d, &["loads", "export", "plant.yaml", "-o", "list.csv"]);
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let out = nadir(
        &d,
        &[
            "loads",
            "import",
            "plant.yaml",
            "list.csv",
            "-o",
            "new.yaml",
        ],
    );
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    assert!(String::from_utf8_lossy(&out.stdout).contains("36 loads (23.100 MW, 8 never shed)"));
    let out = nadir(&d, &["loads", "export", "new.yaml"]);
    assert_eq!(out.stdout, std::fs::read(d.join("list.csv")).unwrap());
    // A rerun gives the same bytes.
    let again = nadir(&d, &["loads", "import", "plant.yaml", "list.csv"]);
    assert_eq!(again.stdout, std::fs::read(d.join("new.yaml")).unwrap());

    let before = std::fs::read(d.join("plant.yaml")).unwrap();
    for (args, says) in [
        (
            vec![
                "loads",
                "import",
                "plant.yaml",
                "list.csv",
                "-o",
                "plant.yaml",
                "--force",
            ],
            "nadir never writes to one of its inputs",
        ),
        (
            vec![
                "loads",
                "import",
                "plant.yaml",
                "list.csv",
                "-o",
                "new.yaml",
            ],
            "already exists; pass --force",
        ),
        (
            vec![
                "loads",
                "import",
                "plant.yaml",
                "list.csv",
                "-o",
                "list.csv",
            ],
            "name it .yaml",
        ),
        (
            vec!["loads", "import", "list.csv", "plant.yaml"],
            "the files look swapped",
        ),
        (
            vec!["loads", "export", "plant.yaml", "-o", "x.yaml"],
            "name it .csv",
        ),
        (
            vec!["loads", "import", "plant.yaml", "missing.csv"],
            "missing.csv",
        ),
    ] {
        let out = nadir(&d, &args);
        let err = String::from_utf8_lossy(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{args:?}: {err}");
        assert!(err.contains(says), "{args:?}: {err}");
    }
    assert_eq!(std::fs::read(d.join("plant.yaml")).unwrap(), before);

    std::fs::write(d.join("bad.csv"), "id,section,p_mw,rank\na,mv-a,x,1\n").unwrap();
    let out = nadir(&d, &["loads", "import", "plant.yaml", "bad.csv"]);
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr)
        .contains("bad.csv:2:3: p_mw (column C): `x` is not a number"));
    assert!(out.stdout.is_empty());
    let _ = std::fs::remove_dir_all(&d);
}

#[test]
fn each_demo_list_imports_to_its_demo_plant() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    for (demo, typed) in [("biorefinery", 34), ("canemill", 15)] {
        let dir = root.join("examples").join(demo);
        let list = std::fs::read_to_string(dir.join("loads.csv")).unwrap();
        let text = std::fs::read_to_string(dir.join("plant.yaml")).unwrap();
        let got = import(&text, &list).unwrap();
        assert_eq!(
            got.plant.value,
            parse_plant(&text, "plant.yaml").unwrap(),
            "{demo}"
        );
        assert_eq!(got.typed, typed, "{demo}");
    }
}

#[test]
fn docs_list_every_heading_and_load_type() {
    let docs = std::fs::read_to_string(Path::new(env!("CARGO_MANIFEST_DIR")).join("docs/files.md"))
        .unwrap();
    for c in load_list::columns::COLUMNS {
        for n in c.names {
            assert!(
                docs.contains(&format!("`{n}`")),
                "docs/files.md lacks heading `{n}`"
            );
        }
    }
    for t in load_list::types::LOAD_TYPES {
        assert!(
            docs.contains(&format!("| `{}` |", t.name)),
            "docs/files.md lacks `{}`",
            t.name
        );
    }
}
