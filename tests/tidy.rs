//! Tidy checks run under `cargo test`: every source file opens with a module doc, every module is named in
//! docs/ARCHITECTURE.md, and `use crate::…` edges follow the "may use" column there.

use std::collections::BTreeMap;
use std::fs;
use std::path::{Path, PathBuf};

fn rust_files(dir: &Path, out: &mut Vec<PathBuf>) {
    for entry in fs::read_dir(dir).expect("src/ is readable") {
        let path = entry.expect("directory entry").path();
        if path.is_dir() {
            rust_files(&path, out);
        } else if path.extension().is_some_and(|e| e == "rs") {
            out.push(path);
        }
    }
}

/// The top-level module a file under src/ belongs to (`src/sim/run.rs` → `sim`).
fn top_module(src: &Path, file: &Path) -> String {
    let rel = file.strip_prefix(src).expect("file under src");
    let first = rel.components().next().expect("non-empty path");
    first
        .as_os_str()
        .to_string_lossy()
        .trim_end_matches(".rs")
        .to_string()
}

fn architecture() -> String {
    fs::read_to_string(Path::new(env!("CARGO_MANIFEST_DIR")).join("docs/ARCHITECTURE.md"))
        .expect("docs/ARCHITECTURE.md exists")
}

/// The "may use" column of the code map: module → allowed imports.
fn allowed_edges() -> BTreeMap<String, Vec<String>> {
    let mut map = BTreeMap::new();
    for line in architecture().lines() {
        let cells: Vec<&str> = line.split('|').map(str::trim).collect();
        if cells.len() < 5 || !cells[1].starts_with('`') {
            continue;
        }
        let module = cells[1].trim_matches('`').to_string();
        let uses: Vec<String> = if cells[3] == "everything" {
            vec!["*".to_string()]
        } else {
            cells[3]
                .split(',')
                .map(|s| s.split_whitespace().next().unwrap_or("").to_string())
                .filter(|s| !s.is_empty() && s != "—")
                .collect()
        };
        map.insert(module, uses);
    }
    map
}

#[test]
fn every_source_file_opens_with_a_module_doc() {
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("src");
    let mut files = Vec::new();
    rust_files(&src, &mut files);
    let missing: Vec<_> = files
        .iter()
        .filter(|f| {
            !fs::read_to_string(f)
                .unwrap_or_default()
                .trim_start()
                .starts_with("//!")
        })
        .collect();
    assert!(
        missing.is_empty(),
        "files without a //! module doc: {missing:?}"
    );
}

#[test]
fn every_module_is_in_the_architecture_map_and_imports_only_what_it_may() {
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("src");
    let edges = allowed_edges();
    let mut files = Vec::new();
    rust_files(&src, &mut files);
    let mut problems = Vec::new();
    for file in &files {
        let module = top_module(&src, file);
        if module == "lib" || module == "main" {
            continue;
        }
        let Some(allowed) = edges.get(&module) else {
            problems.push(format!("module `{module}` is not in docs/ARCHITECTURE.md"));
            continue;
        };
        let text = fs::read_to_string(file).unwrap_or_default();
        for line in text.lines() {
            let line = line.trim();
            let Some(rest) = line
                .strip_prefix("use crate::")
                .or_else(|| line.strip_prefix("pub use crate::"))
            else {
                continue;
            };
            let target: String = rest
                .chars()
                .take_while(|c| c.is_alphanumeric() || *c == '_')
                .collect();
            if target != module && !allowed.iter().any(|a| a == "*" || *a == target) {
                problems.push(format!(
                    "{}: `{module}` may not use `{target}`",
                    file.display()
                ));
            }
        }
    }
    assert!(problems.is_empty(), "{}", problems.join("\n"));
}
