//! The layers of the code read in the order the data flows, and each imports
//! only the layers before it (DEVELOPERS.md, "Layers"). This test reads every
//! source file and fails on an import that goes up, and on a module that is
//! not placed in the order yet.

use std::path::{Path, PathBuf};

/// Library layers, lowest first, then the binary's: `cli` (clap only) and
/// `app` (one handler per command).
const LAYERS: [&str; 14] = [
    "units",
    "error",
    "numeric",
    "composition",
    "properties",
    "kinetics",
    "assess",
    "uncertainty",
    "batch",
    "screen",
    "report",
    "files",
    "cli",
    "app",
];

fn rank(module: &str) -> Option<usize> {
    LAYERS.iter().position(|l| *l == module)
}

fn sources(dir: &Path, out: &mut Vec<PathBuf>) {
    for e in std::fs::read_dir(dir).unwrap() {
        let p = e.unwrap().path();
        if p.is_dir() {
            sources(&p, out);
        } else if p.extension().is_some_and(|x| x == "rs") {
            out.push(p);
        }
    }
}

/// The top-level modules a piece of code names through `prefix::`.
fn named_modules(code: &str, prefix: &str) -> Vec<String> {
    let mut out = Vec::new();
    let pat = format!("{prefix}::");
    let mut rest = code;
    while let Some(i) = rest.find(&pat) {
        let before = rest[..i].chars().last();
        rest = &rest[i + pat.len()..];
        if before.is_some_and(|c| c.is_alphanumeric() || c == '_') {
            continue;
        }
        if let Some(group) = rest.strip_prefix('{') {
            // use crate::{a::X, b}
            let end = group.find('}').unwrap_or(group.len());
            for part in group[..end].split(',') {
                let name: String = part
                    .trim()
                    .chars()
                    .take_while(|c| c.is_alphanumeric() || *c == '_')
                    .collect();
                if !name.is_empty() {
                    out.push(name);
                }
            }
        } else {
            let name: String = rest
                .chars()
                .take_while(|c| c.is_alphanumeric() || *c == '_')
                .collect();
            out.push(name);
        }
    }
    out
}

#[test]
fn no_module_imports_a_layer_above_it() {
    let src = crate::util::root().join("src");
    let mut files = Vec::new();
    sources(&src, &mut files);
    let mut problems = Vec::new();
    for f in &files {
        let rel = f.strip_prefix(&src).unwrap();
        let first = rel
            .components()
            .next()
            .unwrap()
            .as_os_str()
            .to_string_lossy();
        let module = first.trim_end_matches(".rs").to_string();
        if module == "lib" || module == "main" {
            continue;
        }
        let Some(here) = rank(&module) else {
            problems.push(format!(
                "src/{}: module '{module}' is not in the layer order",
                rel.display()
            ));
            continue;
        };
        let text = std::fs::read_to_string(f).unwrap();
        // Unit tests at the end of a file may use anything.
        let code = text.split("\n#[cfg(test)]").next().unwrap_or("");
        let code: String = code
            .lines()
            .filter(|l| !l.trim_start().starts_with("//"))
            .collect::<Vec<_>>()
            .join("\n");
        let in_binary = module == "app" || module == "cli";
        let mut named = named_modules(&code, "quenchwise");
        if in_binary {
            named.extend(named_modules(&code, "crate"));
        } else {
            named.extend(named_modules(&code, "crate"));
            if !named_modules(&code, "quenchwise").is_empty() {
                problems.push(format!(
                    "src/{}: the library names itself as `quenchwise::`",
                    rel.display()
                ));
            }
        }
        for m in named {
            match rank(&m) {
                Some(r) if r > here => problems.push(format!(
                    "src/{}: layer '{module}' imports '{m}', which sits above it",
                    rel.display()
                )),
                Some(_) => {}
                None => problems.push(format!(
                    "src/{}: imports '{m}', which is not in the layer order",
                    rel.display()
                )),
            }
        }
    }
    assert!(problems.is_empty(), "\n{}\n", problems.join("\n"));
}

#[test]
fn the_checker_sees_an_upward_import() {
    // The checker itself must bite: a report-layer line naming files.
    let code =
        "use crate::files::table::read_frame;\nfn f() { crate::{units::Kelvin, screen::Row}; }";
    let named = named_modules(code, "crate");
    assert_eq!(named, vec!["files", "units", "screen"]);
    assert!(rank("files") > rank("report"));
}
