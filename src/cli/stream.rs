//! Files that a running study appends to, one whole line at a time (`--jsonl`, and `--csv` while
//! the study runs), so that an interrupted run keeps every point it finished.
//!
//! Each line is written with one `write_all` under the file's lock and flushed to the operating
//! system at once. The interrupt handler ([`super::io::remove_temporaries_on_interrupt`]) takes
//! every open file's lock before it exits, so it never cuts a line in half and no line starts
//! after it; then it says how many records each file keeps.

use std::io::Write;
use std::path::{Path, PathBuf};
use std::sync::{Arc, Mutex, MutexGuard};

use anyhow::Context;

/// What one open line file holds.
struct Inner {
    /// The option that named it (`--jsonl`, `--csv`).
    flag: &'static str,
    path: PathBuf,
    file: std::fs::File,
    /// Records written (the header not counted).
    kept: usize,
    planned: usize,
    /// What a record is (`points`, `trade factors`).
    unit: &'static str,
    /// The first write error; later records are dropped.
    error: Option<String>,
}

/// The line files open now, for the interrupt handler.
static OPEN: Mutex<Vec<Arc<Mutex<Inner>>>> = Mutex::new(Vec::new());

fn lock<T>(m: &Mutex<T>) -> MutexGuard<'_, T> {
    // A panic while writing a line leaves the data usable: the line count is still right.
    m.lock().unwrap_or_else(std::sync::PoisonError::into_inner)
}

/// A file that a study appends whole lines to while it runs.
pub struct LineFile(Arc<Mutex<Inner>>);

impl LineFile {
    /// Creates (or empties) `path`, writes `header` and registers the file with the interrupt
    /// handler. `planned` records of kind `unit` are expected.
    pub fn create(
        flag: &'static str,
        path: &Path,
        header: &str,
        planned: usize,
        unit: &'static str,
    ) -> anyhow::Result<Self> {
        let mut file = std::fs::File::create(path)
            .with_context(|| format!("{flag} {}: cannot create", path.display()))?;
        file.write_all(header.as_bytes())
            .and_then(|()| file.flush())
            .with_context(|| format!("{flag} {}: cannot write", path.display()))?;
        let inner = Arc::new(Mutex::new(Inner {
            flag,
            path: path.to_path_buf(),
            file,
            kept: 0,
            planned,
            unit,
            error: None,
        }));
        lock(&OPEN).push(Arc::clone(&inner));
        Ok(LineFile(inner))
    }

    /// Appends one whole record line (ending in a newline). A write error is kept for
    /// [`LineFile::close`]; the study goes on.
    pub fn record(&self, line: &str) {
        let mut f = lock(&self.0);
        if f.error.is_some() {
            return;
        }
        match f
            .file
            .write_all(line.as_bytes())
            .and_then(|()| f.file.flush())
        {
            Ok(()) => f.kept += 1,
            Err(e) => f.error = Some(e.to_string()),
        }
    }

    /// Appends `last` (if any), closes the file and forgets it; fails with the first write error.
    pub fn close(self, last: Option<&str>) -> anyhow::Result<()> {
        lock(&OPEN).retain(|o| !Arc::ptr_eq(o, &self.0));
        let mut f = lock(&self.0);
        if let (None, Some(l)) = (&f.error, last) {
            if let Err(e) = f
                .file
                .write_all(l.as_bytes())
                .and_then(|()| f.file.sync_all())
            {
                f.error = Some(e.to_string());
            }
        }
        match &f.error {
            Some(e) => anyhow::bail!("{} {}: cannot write: {e}", f.flag, f.path.display()),
            None => Ok(()),
        }
    }
}

impl Drop for LineFile {
    /// A file left without [`LineFile::close`] (an error before the study ran) is forgotten by
    /// the interrupt handler too.
    fn drop(&mut self) {
        lock(&OPEN).retain(|o| !Arc::ptr_eq(o, &self.0));
    }
}

/// For the interrupt handler: takes the lock of every open line file, so that no line is cut
/// and none starts later, and returns what each keeps. The locks stay taken (the process is
/// about to exit).
pub fn stop_all() -> Vec<String> {
    let open = lock(&OPEN);
    let messages = open
        .iter()
        .map(|o| {
            let f = lock(o);
            let msg = format!(
                "interrupted: {} of {} {} kept in {} ({})",
                f.kept,
                f.planned,
                f.unit,
                f.path.display(),
                f.flag
            );
            std::mem::forget(f);
            msg
        })
        .collect();
    std::mem::forget(open);
    messages
}
