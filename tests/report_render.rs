//! The HTML report renders in a headless browser (Chromium) and its screenshot is not blank.
//! CI installs Chromium (`.ci/run`); without it this test fails under `CI` and is skipped
//! elsewhere (saying so), since a developer machine may have no browser.

use std::path::PathBuf;
use std::process::Command;

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn chromium() -> Option<PathBuf> {
    ["chromium", "chromium-browser", "google-chrome"]
        .iter()
        .filter_map(|name| {
            let out = Command::new("sh")
                .args(["-c", &format!("command -v {name}")])
                .output()
                .ok()?;
            let path = String::from_utf8_lossy(&out.stdout).trim().to_string();
            (!path.is_empty()).then(|| PathBuf::from(path))
        })
        .next()
}

#[test]
fn the_html_report_renders_and_is_not_blank() {
    let Some(browser) = chromium() else {
        assert!(
            std::env::var_os("CI").is_none(),
            "CI must install chromium (see .ci/run)"
        );
        eprintln!("chromium not found: render test skipped on this machine");
        return;
    };
    let dir = std::env::temp_dir().join(format!("kickturn-render-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).expect("scratch folder");
    let html = dir.join("r.html");
    let out = Command::new(env!("CARGO_BIN_EXE_kickturn"))
        .args(["fly", "problems/medium-2stage-leo200.json", "--report"])
        .arg(&html)
        .current_dir(root())
        .output()
        .expect("run kickturn");
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let png = dir.join("r.png");
    let status = Command::new(browser)
        .args([
            "--headless",
            "--no-sandbox",
            "--disable-gpu",
            "--disable-quic",
            "--no-first-run",
            "--disable-background-networking",
            "--disable-component-update",
            "--disable-sync",
            "--hide-scrollbars",
            "--window-size=1280,2400",
        ])
        .arg(format!("--user-data-dir={}", dir.join("profile").display()))
        .arg(format!("--screenshot={}", png.display()))
        .arg(format!("file://{}", html.display()))
        .output()
        .expect("run chromium");
    let img = image::open(&png)
        .unwrap_or_else(|e| {
            panic!(
                "no screenshot ({e}); chromium said: {}",
                String::from_utf8_lossy(&status.stderr)
            )
        })
        .to_luma8();
    // Not blank: the page shows text and figures, so a real share of the pixels differs from
    // the background (the most common grey level).
    let mut hist = [0usize; 256];
    for p in img.pixels() {
        hist[p.0[0] as usize] += 1;
    }
    let total: usize = hist.iter().sum();
    let background = hist.iter().copied().max().unwrap_or(0);
    let ink = (total - background) as f64 / total as f64;
    assert!(
        ink > 0.01,
        "only {:.4} of the pixels differ from the background",
        ink
    );
    let _ = std::fs::remove_dir_all(&dir);
}
