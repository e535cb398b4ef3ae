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
    let mut bytes = Vec::new();
    if is_dash(path) {
        // `-`: the problem comes on standard input (bounded like a file).
        std::io::stdin()
            .lock()
            .take(MAX_INPUT_BYTES + 1)
            .read_to_end(&mut bytes)
            .context("-: standard input")?;
    } else {
        let file = std::fs::File::open(path).with_context(name)?;
        if file.metadata().is_ok_and(|m| m.is_dir()) {
            bail!("{}: is a folder, not a problem file", path.display());
        }
        file.take(MAX_INPUT_BYTES + 1)
            .read_to_end(&mut bytes)
            .with_context(name)?;
    }
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
    let case = Case::from_json(&text).with_context(|| format!("{}", path.display()))?;
    warn(path, &case.warnings);
    Ok(case)
}

/// Prints plausibility warnings on stderr, each prefixed `warning:` and with the file's path.
pub fn warn(path: &Path, warnings: &[problem::Warning]) {
    for w in warnings {
        eprintln!("warning: {}: {w}", path.display());
    }
}

/// Reads and parses a problem file (not validated); returns it with the SHA-256 of its text.
pub fn read_file(path: &Path) -> anyhow::Result<(ProblemFile, String)> {
    let text = read_text(path)?;
    let f = problem::parse(&text).with_context(|| format!("{}", path.display()))?;
    Ok((f, problem::sha256_hex(text.as_bytes())))
}

/// `-`: standard input as a problem, standard output as an output.
pub fn is_dash(p: &Path) -> bool {
    p.as_os_str() == "-"
}

/// Set once an output is `-`: that output takes standard output, the report is not printed.
static STDOUT_OUTPUT: std::sync::atomic::AtomicBool = std::sync::atomic::AtomicBool::new(false);

/// Prints the command's report (text or JSON) unless an output given as `-` holds standard
/// output.
pub fn emit_report(text: &str) -> anyhow::Result<()> {
    if STDOUT_OUTPUT.load(std::sync::atomic::Ordering::Relaxed) {
        return Ok(());
    }
    emit(text)
}

/// Refuses `--json` beside an output given as `-`: both would need standard output.
pub fn check_json_stdout(json: bool) -> anyhow::Result<()> {
    if json && STDOUT_OUTPUT.load(std::sync::atomic::Ordering::Relaxed) {
        bail!(
            "--json and an output given as `-` both need standard output; give that output a file"
        );
    }
    Ok(())
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

/// What an output path will hold.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum OutputKind {
    /// A file, written atomically.
    File,
    /// A folder of figures (created when missing).
    Folder,
}

/// Checks every output of a command before any work (issue 10; docs: README "Outputs"):
/// - an output is never an input file, and no two outputs share a path;
/// - its folder must exist (a figure folder itself is created when missing);
/// - an existing output must be a regular file (a folder for figures): a symbolic link, FIFO or
///   device is refused rather than replaced.
pub fn check_outputs(
    inputs: &[&Path],
    outputs: &[(&str, &Path, OutputKind)],
) -> anyhow::Result<()> {
    let canon = |p: &Path| -> std::path::PathBuf {
        // The folder resolved, the name kept: a path that does not exist yet still compares.
        let dir = p
            .parent()
            .filter(|d| !d.as_os_str().is_empty())
            .unwrap_or(Path::new("."));
        match (dir.canonicalize(), p.file_name()) {
            (Ok(d), Some(n)) => d.join(n),
            _ => p.to_path_buf(),
        }
    };
    let ins: Vec<std::path::PathBuf> = inputs
        .iter()
        .filter(|p| !is_dash(p))
        .map(|p| canon(p))
        .collect();
    let mut seen: Vec<(std::path::PathBuf, &str)> = Vec::new();
    let dashes: Vec<&str> = outputs
        .iter()
        .filter(|(_, p, _)| is_dash(p))
        .map(|(f, _, _)| *f)
        .collect();
    if dashes.len() > 1 {
        bail!(
            "{} and {}: only one output can go to standard output (`-`)",
            dashes[0],
            dashes[1]
        );
    }
    for (flag, path, kind) in outputs {
        if is_dash(path) {
            if *kind == OutputKind::Folder || *flag == "--jsonl" {
                bail!(
                    "{flag} -: needs a {}, not standard output",
                    if *kind == OutputKind::Folder {
                        "folder"
                    } else {
                        "file (the stream is read while it grows)"
                    }
                );
            }
            STDOUT_OUTPUT.store(true, std::sync::atomic::Ordering::Relaxed);
            continue;
        }
        let c = canon(path);
        if ins.contains(&c) {
            bail!(
                "{flag} {}: is an input file; refusing to write over it",
                path.display()
            );
        }
        if let Some((_, other)) = seen.iter().find(|(p, _)| *p == c) {
            bail!(
                "{flag} {}: the same path as {other}; give each output its own",
                path.display()
            );
        }
        seen.push((c, flag));
        let dir = path
            .parent()
            .filter(|d| !d.as_os_str().is_empty())
            .unwrap_or(Path::new("."));
        if !dir.is_dir() {
            bail!(
                "{flag} {}: folder {} does not exist (kickturn creates no folder but a figure \
                 folder itself)",
                path.display(),
                dir.display()
            );
        }
        if let Ok(meta) = std::fs::symlink_metadata(path) {
            let t = meta.file_type();
            let ok = match kind {
                OutputKind::File => t.is_file(),
                OutputKind::Folder => t.is_dir(),
            };
            if !ok {
                let what = if t.is_symlink() {
                    "a symbolic link"
                } else if t.is_dir() {
                    "a folder"
                } else if t.is_file() {
                    "a file"
                } else {
                    "a special file (FIFO, socket or device)"
                };
                bail!(
                    "{flag} {}: is {what}; kickturn replaces only {} (give another path)",
                    path.display(),
                    match kind {
                        OutputKind::File => "regular files",
                        OutputKind::Folder => "folders",
                    }
                );
            }
        }
    }
    Ok(())
}

/// The temporary file beside `path` that an atomic write goes through.
fn temporary(path: &Path) -> anyhow::Result<std::path::PathBuf> {
    let dir = path
        .parent()
        .filter(|d| !d.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    let name = path
        .file_name()
        .with_context(|| format!("{}: not a file name", path.display()))?;
    Ok(dir.join(format!(
        ".{}.tmp{}",
        name.to_string_lossy(),
        std::process::id()
    )))
}

/// Temporary files being written, removed by the interrupt handler.
static PENDING: std::sync::Mutex<Vec<std::path::PathBuf>> = std::sync::Mutex::new(Vec::new());

/// On SIGINT or SIGTERM: removes the temporary files of writes under way, stops the line files
/// of a running study after their last whole line and says what each keeps, and exits with
/// [`super::EXIT_INTERRUPTED`]. An interrupted run leaves no temporary file behind; the outputs it had
/// finished stay, and so do the finished points of a study (`--jsonl`, `--csv`).
pub fn remove_temporaries_on_interrupt() {
    let _ = ctrlc::set_handler(|| {
        if let Ok(list) = PENDING.lock() {
            for p in list.iter() {
                let _ = std::fs::remove_file(p);
            }
        }
        let kept = super::stream::stop_all();
        for m in &kept {
            eprintln!("{m}");
        }
        if kept.is_empty() {
            eprintln!("interrupted: temporary files removed; finished outputs kept");
        } else {
            eprintln!("interrupted: the run did not finish; temporary files removed");
        }
        std::process::exit(super::EXIT_INTERRUPTED.into());
    });
}

/// Records (or forgets) a temporary file for the interrupt handler.
fn pending(path: &Path, add: bool) {
    if let Ok(mut list) = PENDING.lock() {
        if add {
            list.push(path.to_path_buf());
        } else {
            list.retain(|p| p != path);
        }
    }
}

/// Writes `bytes` to a temporary file beside `path`, with the mode of the file it will replace.
fn write_temporary(path: &Path, bytes: &[u8]) -> anyhow::Result<std::path::PathBuf> {
    use std::io::Write;
    let tmp = temporary(path)?;
    pending(&tmp, true);
    let result = (|| -> std::io::Result<()> {
        let mut f = std::fs::File::create(&tmp)?;
        f.write_all(bytes)?;
        if let Ok(meta) = std::fs::metadata(path) {
            f.set_permissions(meta.permissions())?;
        }
        f.sync_all()
    })();
    if let Err(e) = result {
        let _ = std::fs::remove_file(&tmp);
        pending(&tmp, false);
        bail!("cannot write {}: {e}", path.display());
    }
    Ok(tmp)
}

/// Writes `bytes` to `path` atomically (temporary file in the same folder, then rename), keeping
/// the replaced file's mode; refuses to write over the input file.
pub fn write_atomic(path: &Path, input: &Path, bytes: &[u8]) -> anyhow::Result<()> {
    if is_dash(path) {
        return emit(&String::from_utf8_lossy(bytes));
    }
    check_outputs(&[input], &[("output", path, OutputKind::File)])?;
    let tmp = write_temporary(path, bytes)?;
    let renamed = std::fs::rename(&tmp, path).map_err(|e| {
        let _ = std::fs::remove_file(&tmp);
        anyhow::anyhow!("cannot write {}: {e}", path.display())
    });
    pending(&tmp, false);
    renamed
}

/// Writes figures into `dir` (created when missing) as a set: every file is written to a
/// temporary file first, and only when all are written are they renamed into place.
pub fn write_figures(dir: &Path, input: &Path, files: &[FigureFile]) -> anyhow::Result<()> {
    check_outputs(&[input], &[("--plot", dir, OutputKind::Folder)])?;
    std::fs::create_dir_all(dir).with_context(|| format!("cannot create {}", dir.display()))?;
    let mut written = Vec::new();
    for f in files {
        let path = dir.join(&f.name);
        match write_temporary(&path, &f.bytes) {
            Ok(tmp) => written.push((tmp, path)),
            Err(e) => {
                for (tmp, _) in &written {
                    let _ = std::fs::remove_file(tmp);
                    pending(tmp, false);
                }
                return Err(e);
            }
        }
    }
    for (tmp, path) in written {
        let renamed = std::fs::rename(&tmp, &path).map_err(|e| {
            let _ = std::fs::remove_file(&tmp);
            anyhow::anyhow!("cannot write {}: {e}", path.display())
        });
        pending(&tmp, false);
        renamed?;
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
