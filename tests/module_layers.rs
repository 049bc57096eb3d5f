//! The architecture's dependency rule, checked on the source: every module of `src/` may use
//! only the modules of the stages before it (the layer table below, which is the one in the
//! contributor guide), and no two modules use each other, directly or through others.
//!
//! The check reads the source as text: every `crate::…` and `super::…` path (in `use`
//! declarations, grouped ones included, and inline) is resolved to the deepest module file
//! that exists, and becomes an edge from the file that names it. `mod` declarations are not
//! uses. A child module may use its ancestors' items (a parent is the child's namespace); a
//! parent may re-export its children (`pub use`), and nothing else of theirs may point back.
#![allow(clippy::unwrap_used, clippy::expect_used)]

use std::collections::{BTreeMap, BTreeSet};
use std::path::{Path, PathBuf};

/// The stages in pipeline order; a module may use its own stage and earlier ones only.
const LAYERS: &[&[&str]] = &[
    &["units", "progress"],
    &["theory"],
    &["timeline"],
    &["limits", "output"],
    &["audio"],
    &["ingest"],
    &["features"],
    &["align"],
    &["stats", "compare"],
    &["corpus"],
    &["findings"],
    &["pipeline"],
    &["report"],
    &["cli"],
];

fn layer_of(top: &str) -> Option<usize> {
    LAYERS.iter().position(|l| l.contains(&top))
}

fn module_path(src: &Path, file: &Path) -> Vec<String> {
    let rel = file.strip_prefix(src).unwrap();
    let mut parts: Vec<String> = rel
        .iter()
        .map(|p| p.to_string_lossy().into_owned())
        .collect();
    let last = parts.pop().unwrap();
    let stem = last.trim_end_matches(".rs");
    if stem != "mod" && stem != "lib" && stem != "main" {
        parts.push(stem.to_string());
    }
    parts
}

fn rust_files(dir: &Path, out: &mut Vec<PathBuf>) {
    let mut entries: Vec<_> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().path())
        .collect();
    entries.sort();
    for p in entries {
        if p.is_dir() {
            rust_files(&p, out);
        } else if p.extension().is_some_and(|e| e == "rs") {
            out.push(p);
        }
    }
}

/// Drops comments and string literals, so that paths in docs and messages are not uses.
fn strip(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    let b = text.as_bytes();
    let mut i = 0;
    while i < b.len() {
        if b[i] == b'/' && b.get(i + 1) == Some(&b'/') {
            while i < b.len() && b[i] != b'\n' {
                i += 1;
            }
        } else if b[i] == b'"' {
            i += 1;
            while i < b.len() && b[i] != b'"' {
                if b[i] == b'\\' {
                    i += 1;
                }
                i += 1;
            }
            i += 1;
            out.push_str("\"\"");
        } else if b[i] == b'\'' && b.get(i + 2) == Some(&b'\'') {
            // A character literal such as '"'.
            i += 3;
        } else {
            out.push(b[i] as char);
            i += 1;
        }
    }
    out
}

/// Expands `a::{b, c::{d, e}}` into `a::b`, `a::c::d`, `a::c::e`.
fn expand(prefix: &str, tree: &str, out: &mut Vec<String>) {
    let tree = tree.trim();
    if let Some(open) = tree.find('{') {
        let head = tree[..open].trim().trim_end_matches("::");
        let body = &tree[open + 1..tree.rfind('}').unwrap_or(tree.len())];
        let base = join(prefix, head);
        let mut depth = 0;
        let mut start = 0;
        for (k, c) in body.char_indices() {
            match c {
                '{' => depth += 1,
                '}' => depth -= 1,
                ',' if depth == 0 => {
                    expand(&base, &body[start..k], out);
                    start = k + 1;
                }
                _ => {}
            }
        }
        expand(&base, &body[start..], out);
    } else if !tree.is_empty() {
        let item = tree.split(" as ").next().unwrap_or(tree).trim();
        out.push(join(prefix, item));
    }
}

fn join(a: &str, b: &str) -> String {
    match (a.is_empty(), b.is_empty()) {
        (true, _) => b.to_string(),
        (_, true) => a.to_string(),
        _ => format!("{a}::{b}"),
    }
}

/// Every path named in a file, with whether it stands in a `pub use`.
fn paths(code: &str) -> Vec<(String, bool)> {
    let mut out = Vec::new();
    // `use` declarations, grouped ones included.
    let mut rest = code;
    while let Some(k) = rest.find("use ") {
        let before = &rest[..k];
        let is_word_start = before
            .chars()
            .last()
            .is_none_or(|c| !c.is_alphanumeric() && c != '_');
        let tail = &rest[k + 4..];
        let Some(end) = tail.find(';') else { break };
        if is_word_start {
            let public =
                before.trim_end().ends_with("pub") || before.trim_end().ends_with("pub(crate)");
            let mut expanded = Vec::new();
            expand("", &tail[..end], &mut expanded);
            out.extend(expanded.into_iter().map(|p| (p, public)));
        }
        rest = &tail[end..];
    }
    // Inline paths.
    for start in ["crate::", "super::"] {
        let mut from = 0;
        while let Some(k) = code[from..].find(start) {
            let at = from + k;
            let prev = code[..at].chars().last();
            if prev.is_none_or(|c| !c.is_alphanumeric() && c != '_' && c != ':') {
                let path: String = code[at..]
                    .chars()
                    .take_while(|c| c.is_alphanumeric() || *c == '_' || *c == ':')
                    .collect();
                out.push((path.trim_end_matches(':').to_string(), false));
            }
            from = at + start.len();
        }
    }
    out
}

/// The module a path names: the deepest existing module along it.
fn resolve(
    path: &str,
    here: &[String],
    is_dir_module: bool,
    modules: &BTreeSet<Vec<String>>,
) -> Option<Vec<String>> {
    let mut parts: Vec<&str> = path.split("::").collect();
    let mut base: Vec<String> = match parts.first() {
        Some(&"crate") => {
            parts.remove(0);
            Vec::new()
        }
        Some(&"super") => {
            let mut b = here.to_vec();
            // `super` in `x/mod.rs` or `x.rs` is the parent of module x.
            let _ = is_dir_module;
            while parts.first() == Some(&"super") {
                parts.remove(0);
                b.pop();
            }
            b
        }
        _ => return None,
    };
    let mut best = base.clone();
    for p in parts {
        base.push(p.to_string());
        if modules.contains(&base) {
            best = base.clone();
        } else {
            break;
        }
    }
    Some(best)
}

fn is_ancestor(a: &[String], b: &[String]) -> bool {
    a.len() < b.len() && b.starts_with(a)
}

#[test]
fn modules_follow_the_pipeline_and_form_no_circle() {
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("src");
    let mut files = Vec::new();
    rust_files(&src, &mut files);
    let modules: BTreeSet<Vec<String>> = files.iter().map(|f| module_path(&src, f)).collect();
    let mut edges: BTreeMap<Vec<String>, BTreeSet<Vec<String>>> = BTreeMap::new();
    let mut layer_errors = Vec::new();
    for file in &files {
        if file.ends_with("main.rs") || file.ends_with("lib.rs") {
            continue;
        }
        let here = module_path(&src, file);
        let is_dir = file.ends_with("mod.rs");
        let code = strip(&std::fs::read_to_string(file).unwrap());
        // Test modules may use anything.
        let code = match code.find("#[cfg(test)]") {
            Some(k) => code[..k].to_string(),
            None => code,
        };
        for (path, public) in paths(&code) {
            let Some(target) = resolve(&path, &here, is_dir, &modules) else {
                continue;
            };
            if target == here || target.is_empty() || is_ancestor(&target, &here) {
                continue;
            }
            if public && is_ancestor(&here, &target) {
                continue;
            }
            let (from_top, to_top) = (&here[0], &target[0]);
            match (layer_of(from_top), layer_of(to_top)) {
                (Some(f), Some(t)) if t > f => layer_errors.push(format!(
                    "{} uses {} (a later stage)",
                    here.join("::"),
                    target.join("::")
                )),
                (None, _) => layer_errors.push(format!("{from_top} has no stage in LAYERS")),
                (_, None) => layer_errors.push(format!("{to_top} has no stage in LAYERS")),
                _ => {}
            }
            edges.entry(here.clone()).or_default().insert(target);
        }
    }
    layer_errors.sort();
    layer_errors.dedup();
    assert!(
        layer_errors.is_empty(),
        "stage order broken:\n{}",
        layer_errors.join("\n")
    );
    // Circles: depth-first search for a back edge.
    let mut state: BTreeMap<&Vec<String>, u8> = BTreeMap::new();
    let mut circles = Vec::new();
    fn visit<'a>(
        node: &'a Vec<String>,
        edges: &'a BTreeMap<Vec<String>, BTreeSet<Vec<String>>>,
        state: &mut BTreeMap<&'a Vec<String>, u8>,
        stack: &mut Vec<&'a Vec<String>>,
        circles: &mut Vec<String>,
    ) {
        state.insert(node, 1);
        stack.push(node);
        for next in edges.get(node).into_iter().flatten() {
            match state.get(next).copied().unwrap_or(0) {
                0 => visit(next, edges, state, stack, circles),
                1 => {
                    let from = stack.iter().position(|n| *n == next).unwrap_or(0);
                    let names: Vec<String> = stack[from..]
                        .iter()
                        .chain(std::iter::once(&next))
                        .map(|n| n.join("::"))
                        .collect();
                    circles.push(names.join(" → "));
                }
                _ => {}
            }
        }
        stack.pop();
        state.insert(node, 2);
    }
    for node in edges.keys() {
        if state.get(node).copied().unwrap_or(0) == 0 {
            visit(node, &edges, &mut state, &mut Vec::new(), &mut circles);
        }
    }
    assert!(
        circles.is_empty(),
        "modules that use each other:\n{}",
        circles.join("\n")
    );
}
