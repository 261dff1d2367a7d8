//! The house rules that a reader of DEVELOPERS.md relies on, checked on the source text:
//! the host modules import each other without a cycle, `compile/` is a pure stage (it
//! imports neither a runner nor a later stage), and no source file passes 600 lines.
use std::collections::{BTreeMap, BTreeSet};
use std::path::{Path, PathBuf};

fn rust_files(dir: &Path, out: &mut Vec<PathBuf>) {
    for entry in std::fs::read_dir(dir).unwrap() {
        let p = entry.unwrap().path();
        if p.is_dir() {
            rust_files(&p, out);
        } else if p.extension().is_some_and(|e| e == "rs") {
            out.push(p);
        }
    }
}

fn src(dir: &str) -> (PathBuf, Vec<PathBuf>) {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join(dir);
    let mut files = vec![];
    rust_files(&root, &mut files);
    files.sort();
    (root, files)
}

/// Top-level module of the host crate -> the top-level modules it names as `crate::x`.
fn host_imports() -> BTreeMap<String, BTreeSet<String>> {
    let (root, files) = src("src");
    let mut graph: BTreeMap<String, BTreeSet<String>> = BTreeMap::new();
    for f in files {
        let rel = f.strip_prefix(&root).unwrap();
        let first = rel.components().next().unwrap().as_os_str().to_string_lossy().into_owned();
        let module = first.trim_end_matches(".rs").to_string();
        if module == "lib" || module == "main" {
            continue;
        }
        // Code only: a comment may name a later stage (`crate::analysis::prepare`) for the
        // reader without importing it.
        let text: String = std::fs::read_to_string(&f)
            .unwrap()
            .lines()
            .map(|l| l.split("//").next().unwrap_or(""))
            .collect::<Vec<_>>()
            .join("\n");
        let deps = graph.entry(module.clone()).or_default();
        for (i, _) in text.match_indices("crate::") {
            let name: String = text[i + 7..].chars().take_while(|c| c.is_ascii_alphanumeric() || *c == '_').collect();
            if !name.is_empty() && name != module {
                deps.insert(name);
            }
        }
    }
    graph
}

/// The first import cycle of `graph`, if any (depth-first search; a module met again while
/// it is still on the search path closes a cycle).
fn find_cycle(graph: &BTreeMap<String, BTreeSet<String>>) -> Option<String> {
    fn visit<'a>(
        m: &'a str,
        graph: &'a BTreeMap<String, BTreeSet<String>>,
        path: &mut Vec<&'a str>,
        finished: &mut BTreeSet<&'a str>,
    ) -> Option<String> {
        if let Some(at) = path.iter().position(|s| *s == m) {
            return Some(format!("{} -> {m}", path[at..].join(" -> ")));
        }
        if finished.contains(m) {
            return None;
        }
        path.push(m);
        for d in graph.get(m).into_iter().flatten() {
            if let Some(c) = visit(d, graph, path, finished) {
                return Some(c);
            }
        }
        path.pop();
        finished.insert(m);
        None
    }
    let mut finished = BTreeSet::new();
    graph.keys().find_map(|m| visit(m, graph, &mut vec![], &mut finished))
}

#[test]
fn the_cycle_finder_finds_a_cycle() {
    let g = |edges: &[(&str, &str)]| {
        let mut g: BTreeMap<String, BTreeSet<String>> = BTreeMap::new();
        for (a, b) in edges {
            g.entry(a.to_string()).or_default().insert(b.to_string());
        }
        g
    };
    let cycle = g(&[("compile", "twin"), ("twin", "run"), ("run", "compile")]);
    assert_eq!(find_cycle(&cycle).as_deref(), Some("compile -> twin -> run -> compile"));
    assert_eq!(find_cycle(&g(&[("a", "b"), ("b", "c"), ("a", "c")])), None);
}

#[test]
fn host_modules_import_each_other_without_a_cycle() {
    let graph = host_imports();
    assert!(graph.len() >= 10, "the scan found the host modules: {graph:#?}");
    if let Some(c) = find_cycle(&graph) {
        panic!("import cycle: {c}\nthe graph: {graph:#?}");
    }
}

#[test]
fn compile_is_a_pure_stage() {
    let graph = host_imports();
    let deps = &graph["compile"];
    for later in ["twin", "host_core", "analysis", "verify", "cli", "plot"] {
        assert!(!deps.contains(later), "compile/ imports {later}: {deps:?}");
    }
    // And the runners do not reach back into the analysis stage.
    for runner in ["twin", "host_core"] {
        assert!(!graph[runner].contains("analysis"), "{runner} imports analysis");
    }
}

#[test]
fn no_source_file_passes_600_lines() {
    let mut long = vec![];
    for dir in ["src", "../core/src"] {
        for f in src(dir).1 {
            let n = std::fs::read_to_string(&f).unwrap().lines().count();
            if n > 600 {
                long.push(format!("{} ({n} lines)", f.display()));
            }
        }
    }
    assert!(long.is_empty(), "split these files: {long:?}");
}
