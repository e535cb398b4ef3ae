//! Files, standard output and the terminal: reading problem files, writing results atomically
//! (never over an input), and the progress bar that shows a study's [`Observer`] calls.

use std::io::IsTerminal;
use std::path::Path;

use anyhow::{bail, Context};
use indicatif::{ProgressBar, ProgressStyle};

use kickturn::app::{Case, Observer};
use kickturn::problem::{self, ProblemFile};
use kickturn::render::figures::FigureFile;

/// Largest problem file read, bytes (the demos are about 3 KB; a program of 200 arcs about 40 KB).
pub const MAX_INPUT_BYTES: u64 = 16 * 1024 * 1024;

/// Reads a problem file's text, at most [`MAX_INPUT_BYTES`] (so that an endless stream such as
/// `/dev/zero` ends at once), as UTF-8.
pub fn read_text(path: &Path) -> anyhow::Result<String> {
    use std::io::Read;
    let name = || format!("{}", path.display());
    let file = std::fs::File::open(path).with_context(name)?;
    if file.metadata().is_ok_and(|m| m.is_dir()) {
        bail!("{}: is a folder, not a problem file", path.display());
    }
    let mut bytes = Vec::new();
    file.take(MAX_INPUT_BYTES + 1)
        .read_to_end(&mut bytes)
        .with_context(name)?;
    if bytes.len() as u64 > MAX_INPUT_BYTES {
        bail!(
            "{}: larger than {} MiB; a problem file is a few kilobytes of JSON",
            path.display(),
            MAX_INPUT_BYTES / (1024 * 1024)
        );
    }
    String::from_utf8(bytes)
        .map_err(|e| anyhow::anyhow!("{}: not UTF-8 text ({e})", path.display()))
}

/// Reads, parses and validates a problem file, with the path in any error.
pub fn load_case(path: &Path) -> anyhow::Result<Case> {
    let text = read_text(path)?;
    Case::from_json(&text).with_context(|| format!("{}", path.display()))
}

/// Reads and parses a problem file (not validated); returns it with the SHA-256 of its text.
pub fn read_file(path: &Path) -> anyhow::Result<(ProblemFile, String)> {
    let text = read_text(path)?;
    let f = problem::parse(&text).with_context(|| format!("{}", path.display()))?;
    Ok((f, problem::sha256_hex(text.as_bytes())))
}

/// Writes results to stdout; a closed pipe (`kickturn fly … | head`) is not an error.
pub fn emit(text: &str) -> anyhow::Result<()> {
    use std::io::Write;
    let mut out = std::io::stdout().lock();
    match out.write_all(text.as_bytes()).and_then(|()| out.flush()) {
        Err(e) if e.kind() != std::io::ErrorKind::BrokenPipe => Err(e.into()),
        _ => Ok(()),
    }
}

/// Writes `bytes` to `path` atomically (temporary file in the same folder, then rename); refuses
/// to write over the input file.
pub fn write_atomic(path: &Path, input: &Path, bytes: &[u8]) -> anyhow::Result<()> {
    use std::io::Write;
    if let (Ok(a), Ok(b)) = (path.canonicalize(), input.canonicalize()) {
        if a == b {
            bail!("{}: refusing to write over the input file", path.display());
        }
    }
    let dir = path
        .parent()
        .filter(|d| !d.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    let name = path
        .file_name()
        .with_context(|| format!("{}: not a file name", path.display()))?;
    let tmp = dir.join(format!(
        ".{}.tmp{}",
        name.to_string_lossy(),
        std::process::id()
    ));
    let result = (|| {
        let mut f = std::fs::File::create(&tmp)
            .with_context(|| format!("cannot create {}", tmp.display()))?;
        f.write_all(bytes)?;
        f.sync_all()?;
        std::fs::rename(&tmp, path).with_context(|| format!("cannot write {}", path.display()))
    })();
    if result.is_err() {
        let _ = std::fs::remove_file(&tmp);
    }
    result
}

/// Writes figures into `dir` (created when missing), each file atomically.
pub fn write_figures(dir: &Path, input: &Path, files: &[FigureFile]) -> anyhow::Result<()> {
    std::fs::create_dir_all(dir).with_context(|| format!("cannot create {}", dir.display()))?;
    for f in files {
        write_atomic(&dir.join(&f.name), input, &f.bytes)?;
    }
    Ok(())
}

/// A progress bar on stderr while a study runs, shown only when stderr is a terminal.
pub struct Progress(ProgressBar);

impl Progress {
    /// A bar that appears when the study starts.
    pub fn new() -> Self {
        Progress(ProgressBar::hidden())
    }
}

impl Observer for Progress {
    fn started(&self, what: &str, total: usize) {
        if !std::io::stderr().is_terminal() {
            return;
        }
        self.0
            .set_draw_target(indicatif::ProgressDrawTarget::stderr());
        self.0.set_length(total as u64);
        if let Ok(style) = ProgressStyle::with_template("{msg} [{bar:30}] {pos}/{len} {elapsed}") {
            self.0.set_style(style);
        }
        self.0.set_message(what.to_string());
    }

    fn advanced(&self) {
        self.0.inc(1);
    }

    fn finished(&self) {
        self.0.finish_and_clear();
    }

    fn diagnostic(&self, message: &dyn Fn() -> String) {
        // Developers' trace of the optimizer's search (the library itself never prints).
        if std::env::var_os("KICKTURN_DEBUG").is_some() {
            eprintln!("debug: {}", message());
        }
    }
}
