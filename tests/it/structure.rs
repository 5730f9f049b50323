//! The module structure of both crates (the engine and the `lehr` binary): no two
//! modules import each other, directly or around a loop, and no source file (engine,
//! binary, tests, examples) grows past [`MAX_LINES`].
//!
//! The import graph is read from the source text: `use` paths and inline paths that
//! start with `crate::`, `super::`, `self::` or a child module's name, each resolved to
//! the deepest module it names (through a `pub use` re-export of a module's own file to
//! the module that defines the item). A private submodule (not declared `pub mod`) is an
//! implementation file of its parent: its imports count as its parent's, and uses within
//! one module's family (a module and its private parts) are not edges. Comments and
//! `#[cfg(test)] mod tests` blocks are left out.

use std::collections::{BTreeMap, BTreeSet};
use std::path::{Path, PathBuf};

use petgraph::algo::tarjan_scc;
use petgraph::graph::DiGraph;

/// Longest source file, in lines.
const MAX_LINES: usize = 1_100;

type Module = Vec<String>;

fn engine_src() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("engine/src")
}

fn binary_src() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("src")
}

/// Every `.rs` file under `dir`, with its module path (`place/layout/energy.rs` ->
/// `place::layout::energy`; `mod.rs` and `lib.rs` name their folder).
fn modules(root: &Path, dir: &Path, out: &mut BTreeMap<Module, PathBuf>) {
    let mut entries: Vec<_> = std::fs::read_dir(dir)
        .expect("read engine/src")
        .map(|e| e.expect("dir entry").path())
        .collect();
    entries.sort();
    for path in entries {
        if path.is_dir() {
            modules(root, &path, out);
        } else if path.extension().is_some_and(|e| e == "rs") {
            let rel = path
                .strip_prefix(root)
                .expect("under root")
                .with_extension("");
            let mut m: Module = rel
                .components()
                .map(|c| c.as_os_str().to_string_lossy().into_owned())
                .collect();
            if matches!(m.last().map(String::as_str), Some("mod" | "lib" | "main")) {
                m.pop();
            }
            out.insert(m, path);
        }
    }
}

/// The source without line comments and without a trailing test module.
fn code(src: &str) -> String {
    let mut out = String::with_capacity(src.len());
    for line in src.lines() {
        let line = match line.find("//") {
            Some(i) if !line[..i].contains('"') => &line[..i],
            _ => line,
        };
        out.push_str(line);
        out.push('\n');
    }
    let compact: String = out.split_whitespace().collect::<Vec<_>>().join(" ");
    match compact.find("#[cfg(test)] mod tests") {
        Some(i) => compact[..i].to_string(),
        None => compact,
    }
}

/// `a::{b, c::{d, e}}` -> `a::b`, `a::c::d`, `a::c::e`.
fn expand(s: &str) -> Vec<String> {
    let s: String = s.chars().filter(|c| !c.is_whitespace()).collect();
    let Some(open) = s.find('{') else {
        return vec![s];
    };
    let close = s.rfind('}').unwrap_or(s.len());
    let (prefix, inner) = (&s[..open], &s[open + 1..close]);
    let mut parts = Vec::new();
    let (mut depth, mut cur) = (0, String::new());
    for ch in inner.chars() {
        match ch {
            ',' if depth == 0 => parts.push(std::mem::take(&mut cur)),
            '{' => {
                depth += 1;
                cur.push(ch);
            }
            '}' => {
                depth -= 1;
                cur.push(ch);
            }
            _ => cur.push(ch),
        }
    }
    parts.push(cur);
    parts
        .iter()
        .filter(|p| !p.is_empty())
        .flat_map(|p| expand(p))
        .map(|p| format!("{prefix}{p}"))
        .collect()
}

/// The `use` declarations of `code` (after `prefix`, e.g. `pub use `), expanded.
fn uses(code: &str, prefix: &str) -> Vec<String> {
    let mut out = Vec::new();
    let mut rest = code;
    while let Some(i) = rest.find(prefix) {
        let before = rest[..i].chars().last();
        rest = &rest[i + prefix.len()..];
        if before.is_some_and(|c| c.is_alphanumeric() || c == '_') {
            continue;
        }
        let end = rest.find(';').unwrap_or(rest.len());
        // `a as b` keeps its path, marked so that removing blanks cannot join them.
        out.extend(expand(&rest[..end].replace(" as ", "@")));
        rest = &rest[end..];
    }
    out
}

/// Inline paths: words joined by `::` (`crate::model::Point`, `layout::Layout`).
fn inline_paths(code: &str) -> Vec<String> {
    let mut out = Vec::new();
    let bytes = code.as_bytes();
    let word = |b: u8| b.is_ascii_alphanumeric() || b == b'_';
    let mut i = 0;
    while i < bytes.len() {
        if word(bytes[i]) && (i == 0 || (!word(bytes[i - 1]) && bytes[i - 1] != b':')) {
            let start = i;
            let mut end = i;
            loop {
                while end < bytes.len() && word(bytes[end]) {
                    end += 1;
                }
                if code[end..].starts_with("::") && bytes.get(end + 2).is_some_and(|&b| word(b)) {
                    end += 2;
                } else {
                    break;
                }
            }
            if code[start..end].contains("::") {
                out.push(code[start..end].to_string());
            }
            i = end.max(i + 1);
        } else {
            i += 1;
        }
    }
    out
}

/// The absolute path of `path` written inside module `m`, if it is a path into the crate.
fn absolute(mods: &BTreeMap<Module, PathBuf>, m: &Module, path: &str) -> Option<Module> {
    let path = path.split('@').next().unwrap_or(path);
    let segs: Vec<&str> = path.split("::").filter(|s| !s.is_empty()).collect();
    let first = *segs.first()?;
    let mut cur = m.clone();
    let mut rest = &segs[..];
    match first {
        "crate" => {
            cur.clear();
            rest = &segs[1..];
        }
        "self" => rest = &segs[1..],
        "super" => {
            while rest.first() == Some(&"super") {
                cur.pop();
                rest = &rest[1..];
            }
        }
        _ => {
            let mut child = m.clone();
            child.push(first.to_string());
            if !mods.contains_key(&child) {
                return None;
            }
        }
    }
    cur.extend(rest.iter().map(|s| s.to_string()));
    Some(cur)
}

struct Crate {
    mods: BTreeMap<Module, PathBuf>,
    code: BTreeMap<Module, String>,
    /// (module, item) -> the path its `pub use` names.
    reexports: BTreeMap<(Module, String), String>,
    private: BTreeSet<Module>,
}

impl Crate {
    fn read(root: &Path) -> Crate {
        let mut mods = BTreeMap::new();
        modules(root, root, &mut mods);
        let code: BTreeMap<Module, String> = mods
            .iter()
            .map(|(m, p)| (m.clone(), self::code(&std::fs::read_to_string(p).unwrap())))
            .collect();
        let mut reexports = BTreeMap::new();
        let mut private = BTreeSet::new();
        for (m, c) in &code {
            for p in uses(c, "pub use ") {
                let name = match p.split_once('@') {
                    Some((_, alias)) => alias.to_string(),
                    None => p.rsplit("::").next().unwrap_or(&p).to_string(),
                };
                reexports.insert((m.clone(), name), p.clone());
            }
            // A module's children are private unless declared `pub mod` (a macro may
            // declare private ones, e.g. the schedule registry's `schedules!`).
            let public: BTreeSet<String> = mod_decls(c)
                .into_iter()
                .filter(|(_, public)| *public)
                .map(|(name, _)| name)
                .collect();
            for child in mods.keys() {
                if child.len() == m.len() + 1
                    && child.starts_with(m)
                    && !public.contains(child.last().expect("a child has a name"))
                {
                    private.insert(child.clone());
                }
            }
        }
        Crate {
            mods,
            code,
            reexports,
            private,
        }
    }

    /// The module an absolute path lands in.
    fn target(&self, segs: &Module, depth: usize) -> Option<Module> {
        let k = (1..=segs.len())
            .rev()
            .find(|&k| self.mods.contains_key(&segs[..k]))?;
        let module = segs[..k].to_vec();
        if let Some(item) = segs.get(k)
            && depth < 5
            && let Some(p) = self.reexports.get(&(module.clone(), item.clone()))
            && let Some(abs) = absolute(&self.mods, &module, p)
            && let Some(t) = self.target(&abs, depth + 1)
        {
            return Some(t);
        }
        Some(module)
    }

    /// The nearest module at or above `m` that is not a private submodule.
    fn owner(&self, m: &Module) -> Module {
        let mut m = m.clone();
        while self.private.contains(&m) && m.len() > 1 {
            m.pop();
        }
        m
    }

    fn edges(&self) -> BTreeMap<Module, BTreeSet<Module>> {
        let mut edges: BTreeMap<Module, BTreeSet<Module>> = BTreeMap::new();
        for (m, c) in &self.code {
            let mut to = BTreeSet::new();
            for p in uses(c, "use ").into_iter().chain(inline_paths(c)) {
                let Some(abs) = absolute(&self.mods, m, &p) else {
                    continue;
                };
                let Some(t) = self.target(&abs, 0) else {
                    continue;
                };
                // A private submodule is part of its parent: edges leave from and land
                // on the public module that owns it, and uses inside one module's
                // family (between a module and its private parts) are not edges.
                let (from, t) = (self.owner(m), self.owner(&t));
                if from != t && !from.starts_with(&t) && !t.starts_with(&from) {
                    to.insert(t);
                }
            }
            edges.entry(self.owner(m)).or_default().extend(to);
        }
        edges
    }
}

/// The `mod x;` declarations of `code`: each name, and whether it is `pub` (of any
/// reach).
fn mod_decls(code: &str) -> Vec<(String, bool)> {
    let mut out = Vec::new();
    for (i, _) in code.match_indices("mod ") {
        if code[..i].ends_with(|c: char| c.is_alphanumeric() || c == '_') {
            continue;
        }
        let rest = &code[i + 4..];
        let name: String = rest
            .chars()
            .take_while(|c| c.is_alphanumeric() || *c == '_')
            .collect();
        if name.is_empty() || !rest[name.len()..].trim_start().starts_with(';') {
            continue;
        }
        let before = code[..i].trim_end();
        out.push((name, before.ends_with("pub") || before.ends_with(')')));
    }
    out
}

fn name(m: &Module) -> String {
    if m.is_empty() {
        "crate".into()
    } else {
        m.join("::")
    }
}

/// The loops among a crate's modules, each as its modules' names; panics when fewer than
/// `min_edges` imports were read (the reader would then be broken, not the crate sound).
fn loops(root: &Path, min_edges: usize) -> Vec<String> {
    let krate = Crate::read(root);
    let edges = krate.edges();
    let mut graph = DiGraph::<Module, ()>::new();
    let index: BTreeMap<Module, _> = edges
        .keys()
        .map(|m| (m.clone(), graph.add_node(m.clone())))
        .collect();
    for (m, to) in &edges {
        for t in to {
            if let Some(&b) = index.get(t) {
                graph.add_edge(index[m], b, ());
            }
        }
    }
    assert!(
        edges.values().map(BTreeSet::len).sum::<usize>() > min_edges,
        "the import graph of {} was not read",
        root.display()
    );
    tarjan_scc(&graph)
        .into_iter()
        .filter(|c| c.len() > 1)
        .map(|c| {
            let mut names: Vec<String> = c.iter().map(|&n| name(&graph[n])).collect();
            names.sort();
            names.join(", ")
        })
        .collect()
}

#[test]
fn engine_modules_import_no_loop() {
    let loops = loops(&engine_src(), 100);
    assert!(
        loops.is_empty(),
        "engine modules that import each other: {loops:#?}"
    );
}

#[test]
fn binary_modules_import_no_loop() {
    let loops = loops(&binary_src(), 2);
    assert!(
        loops.is_empty(),
        "binary modules that import each other: {loops:#?}"
    );
}

#[test]
fn source_files_stay_short() {
    let top = Path::new(env!("CARGO_MANIFEST_DIR"));
    let mut files = Vec::new();
    for dir in ["engine/src", "src", "tests", "examples"] {
        let (root, mut mods) = (top.join(dir), BTreeMap::new());
        modules(&root, &root, &mut mods);
        files.extend(mods.into_values());
    }
    assert!(files.len() > 100, "the source files were not found");
    let long: Vec<String> = files
        .iter()
        .filter_map(|p| {
            let n = std::fs::read_to_string(p).unwrap().lines().count();
            (n > MAX_LINES).then(|| format!("{} ({n} lines)", p.display()))
        })
        .collect();
    assert!(long.is_empty(), "files over {MAX_LINES} lines: {long:?}");
}
