//! The shape DEVELOPERS.md promises: the top-level modules of `src/` form a
//! chain without import circles (a module may use those below it, never one
//! that uses it back). Read from the source text: every `crate::name` outside
//! comments and test modules is an arrow from the file's top-level module to
//! `name`.

use std::collections::{BTreeMap, BTreeSet};
use std::path::{Path, PathBuf};

fn rust_files(dir: &Path, out: &mut Vec<PathBuf>) {
    for entry in std::fs::read_dir(dir).expect("read src") {
        let p = entry.expect("entry").path();
        if p.is_dir() {
            rust_files(&p, out);
        } else if p.extension().is_some_and(|e| e == "rs") {
            out.push(p);
        }
    }
}

/// `crate::name` references in the code of one file (comments and the
/// `#[cfg(test)]` tail left out).
fn references(text: &str) -> BTreeSet<String> {
    let code = text.split("#[cfg(test)]").next().unwrap_or("");
    let mut out = BTreeSet::new();
    for line in code.lines().filter(|l| !l.trim_start().starts_with("//")) {
        let mut rest = line;
        while let Some(i) = rest.find("crate::") {
            rest = &rest[i + 7..];
            let name: String = rest
                .chars()
                .take_while(|c| c.is_alphanumeric() || *c == '_')
                .collect();
            if !name.is_empty() {
                out.insert(name);
            }
        }
    }
    out
}

fn module_graph() -> BTreeMap<String, BTreeSet<String>> {
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("src");
    let mut files = Vec::new();
    rust_files(&src, &mut files);
    let mut graph: BTreeMap<String, BTreeSet<String>> = BTreeMap::new();
    for f in files {
        let rel = f.strip_prefix(&src).expect("under src");
        let top = rel
            .components()
            .next()
            .and_then(|c| c.as_os_str().to_str())
            .expect("a name")
            .trim_end_matches(".rs")
            .to_string();
        let text = std::fs::read_to_string(&f).expect("read");
        let deps = graph.entry(top.clone()).or_default();
        deps.extend(references(&text).into_iter().filter(|d| *d != top));
    }
    graph
}

fn reaches(graph: &BTreeMap<String, BTreeSet<String>>, from: &str, to: &str) -> bool {
    let mut seen = BTreeSet::new();
    let mut stack: Vec<&str> = vec![from];
    while let Some(x) = stack.pop() {
        for y in graph.get(x).into_iter().flatten() {
            if y == to {
                return true;
            }
            if seen.insert(y.as_str()) {
                stack.push(y);
            }
        }
    }
    false
}

#[test]
fn top_level_modules_have_no_import_circle() {
    let graph = module_graph();
    let circles: Vec<String> = graph
        .iter()
        .flat_map(|(m, deps)| deps.iter().map(move |d| (m, d)))
        .filter(|(m, d)| reaches(&graph, d, m))
        .map(|(m, d)| format!("{m} -> {d} -> ... -> {m}"))
        .collect();
    assert!(circles.is_empty(), "import circles: {circles:?}");
}

#[test]
fn the_numerical_stages_do_not_know_the_writers_or_the_report() {
    let graph = module_graph();
    for stage in [
        "survey",
        "integrate",
        "fit",
        "realign",
        "advice",
        "georef",
        "simulate",
    ] {
        for edge in ["export", "report", "pipeline", "results", "cli"] {
            assert!(
                !graph.get(stage).is_some_and(|d| d.contains(edge)),
                "{stage} uses {edge}: the arrows must point down the chain"
            );
        }
    }
}

#[test]
fn the_reference_reader_sees_arrows() {
    // The checks above would pass vacuously if the reader found nothing.
    let r = references("use crate::fit::Plan;\n// crate::report\nlet x = crate::units::FOOT;");
    assert_eq!(r.into_iter().collect::<Vec<_>>(), ["fit", "units"]);
}
