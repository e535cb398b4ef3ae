//! The layering rules, checked on the source text (docs/architecture.md): the library never
//! prints, exits, reads the environment or touches files; nothing in it imports the command
//! line; dependencies point down only (core ← app ← render ← the binary's `cli`); clap,
//! indicatif and anyhow appear only in the binary's modules, plotters only in the figure
//! renderers.

use std::path::{Path, PathBuf};

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

/// Every `.rs` file under `dir`, recursively.
fn sources(dir: &Path) -> Vec<PathBuf> {
    let mut out = Vec::new();
    let Ok(entries) = std::fs::read_dir(dir) else {
        return out;
    };
    for e in entries.flatten() {
        let p = e.path();
        if p.is_dir() {
            out.extend(sources(&p));
        } else if p.extension().is_some_and(|x| x == "rs") {
            out.push(p);
        }
    }
    out.sort();
    out
}

/// The code of a file: unit-test modules (from `#[cfg(test)]` on) and comment lines removed.
fn code(path: &Path) -> String {
    let text = std::fs::read_to_string(path).unwrap_or_default();
    let body = text.split("#[cfg(test)]").next().unwrap_or("");
    body.lines()
        .filter(|l| !l.trim_start().starts_with("//"))
        .collect::<Vec<_>>()
        .join("\n")
}

/// Library files (everything under src/ except the binary's main.rs and cli/), relative path and
/// code.
fn library() -> Vec<(String, String)> {
    let src = root().join("src");
    sources(&src)
        .into_iter()
        .filter_map(|p| {
            let rel = p
                .strip_prefix(&src)
                .ok()?
                .to_string_lossy()
                .replace('\\', "/");
            (rel != "main.rs" && !rel.starts_with("cli/")).then(|| (rel, code(&p)))
        })
        .collect()
}

/// Library files whose code contains any of `needles`, with the needle found.
fn offenders(files: &[(String, String)], needles: &[&str]) -> Vec<String> {
    files
        .iter()
        .flat_map(|(f, c)| {
            needles
                .iter()
                .filter(|n| c.contains(*n))
                .map(move |n| format!("{f}: {n}"))
        })
        .collect()
}

#[test]
fn the_library_has_sources_to_check() {
    let lib = library();
    assert!(lib.len() > 30, "{} library files", lib.len());
    assert!(lib.iter().any(|(f, _)| f == "core/sim/flight.rs"));
}

#[test]
fn the_library_never_prints_exits_or_touches_files() {
    let bad = offenders(
        &library(),
        &[
            "println!(",
            "print!(",
            "eprintln!(",
            "eprint!(",
            "dbg!(",
            "process::exit",
            "std::fs",
            "std::env::var",
            "stdout()",
            "stderr()",
        ],
    );
    assert!(bad.is_empty(), "{bad:#?}");
}

#[test]
fn nothing_in_the_library_uses_the_command_line_layer_or_its_crates() {
    let bad = offenders(
        &library(),
        &["crate::cli", "clap::", "indicatif", "anyhow::", "anyhow!"],
    );
    assert!(bad.is_empty(), "{bad:#?}");
}

#[test]
fn dependencies_point_down_only() {
    let lib = library();
    let core: Vec<_> = lib
        .iter()
        .filter(|(f, _)| f.starts_with("core/"))
        .cloned()
        .collect();
    let app: Vec<_> = lib
        .iter()
        .filter(|(f, _)| f.starts_with("app/"))
        .cloned()
        .collect();
    assert!(!core.is_empty() && !app.is_empty());
    let up_from_core = offenders(&core, &["crate::app", "crate::render", "super::super::app"]);
    assert!(up_from_core.is_empty(), "{up_from_core:#?}");
    let up_from_app = offenders(&app, &["crate::render"]);
    assert!(up_from_app.is_empty(), "{up_from_app:#?}");
}

#[test]
fn plotters_is_used_only_by_the_figure_renderers() {
    let outside: Vec<_> = library()
        .into_iter()
        .filter(|(f, _)| !matches!(f.as_str(), "render/plots.rs"))
        .collect();
    let bad = offenders(&outside, &["plotters::", "image::"]);
    assert!(bad.is_empty(), "{bad:#?}");
}
