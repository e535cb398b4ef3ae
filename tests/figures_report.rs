//! Issue 12, items 5 and 6: the figures (every flight figure drawn, valid SVG, limits with units,
//! the ascent close-up, the ground track with the impact point) and the HTML reports (vehicle,
//! cutoff state, orbital elements, captions, responsive figures, the per-arc columns of the text
//! report; `--plot` and `--report` for compare and trade).

use std::path::{Path, PathBuf};

mod bin_support;
use bin_support::kickturn;

fn scratch(tag: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("kickturn-fr-{tag}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).expect("scratch folder");
    dir
}

fn ok(out: &std::process::Output) {
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
}

/// Parses every SVG of `dir` as XML and returns (stem, text) pairs.
fn svgs(dir: &Path) -> Vec<(String, String)> {
    let mut v: Vec<(String, String)> = std::fs::read_dir(dir)
        .map(|d| {
            d.filter_map(Result::ok)
                .map(|e| e.path())
                .collect::<Vec<_>>()
        })
        .unwrap_or_default()
        .into_iter()
        .filter(|p| p.extension().is_some_and(|e| e == "svg"))
        .map(|p| {
            let text = std::fs::read_to_string(&p).expect("utf-8 SVG");
            let doc = roxmltree::Document::parse(&text)
                .unwrap_or_else(|e| panic!("{}: not XML: {e}", p.display()));
            assert_eq!(doc.root_element().tag_name().name(), "svg");
            let stem = p.file_stem().map(|s| s.to_string_lossy().to_string());
            (stem.unwrap_or_default(), text)
        })
        .collect();
    v.sort();
    v
}

fn svg_of<'a>(all: &'a [(String, String)], stem: &str) -> &'a str {
    all.iter()
        .find(|(s, _)| s == stem)
        .map_or_else(|| panic!("no {stem}.svg"), |(_, t)| t.as_str())
}

#[test]
fn flight_figures_cover_every_view_with_limits_in_units_and_an_ascent_close_up() {
    let dir = scratch("fly");
    let figs = dir.join("figs");
    let out = kickturn(&[
        "fly",
        "problems/small-3stage-sso500.json",
        "--plot",
        &figs.to_string_lossy(),
    ]);
    ok(&out);
    let all = svgs(&figs);
    // The small demo coasts ~2,400 s to apogee: every time history also comes as a close-up.
    for stem in [
        "altitude_speed",
        "angles",
        "loads",
        "mass_throttle",
        "mach",
        "losses",
    ] {
        for s in [stem.to_string(), format!("{stem}_ascent")] {
            let png = std::fs::metadata(figs.join(format!("{s}.png")))
                .map(|m| m.len())
                .unwrap_or(0);
            assert!(png > 10_000, "{s}.png is {png} bytes");
            assert!(svg_of(&all, &s).contains("Azalea S3"), "{s}: title");
        }
    }
    for stem in ["profile", "ground_track", "budget", "budget_arcs"] {
        assert!(figs.join(format!("{stem}.png")).is_file(), "{stem}.png");
    }
    assert_eq!(
        all.len(),
        16,
        "{:?}",
        all.iter().map(|a| &a.0).collect::<Vec<_>>()
    );
    // No text is cut at the default size: titles shrink, legends and bar names wrap, and a
    // burn band too narrow for its name stays unlabelled.
    for (stem, text) in &all {
        assert!(!text.contains('…'), "{stem}.svg has cut text");
    }
    let loads = svg_of(&all, "loads");
    assert!(loads.contains("q limit 40 kPa"), "q limit with its unit");
    assert!(loads.contains("g limit 6 g0"), "g limit with its unit");
    // Burn shading: each burn arc is named at the foot of its band.
    let shaded = svg_of(&all, "angles_ascent");
    assert!(shaded.contains("Azalea first stage") && shaded.contains("burn 3: Azalea kick stage"));
    let track = svg_of(&all, "ground_track");
    assert!(track.contains("vacuum impact point (IIP)"));
    assert!(track.contains("longitude [deg east]"));
    // The legend wraps instead of cutting: both halves of the long label are drawn whole.
    let angles = svg_of(&all, "angles");
    assert!(angles.contains("flight-path angle (Earth-") && angles.contains("relative)"));
    assert!(!angles.contains('…'), "no cut text in the attitude figure");
    // The waterfall starts near the final speed (a broken axis) and prints one decimal on
    // every bar.
    let budget = svg_of(&all, "budget");
    assert!(budget.contains("(axis from 7000)"), "broken axis named");
    assert!(!budget.contains('…'), "no cut bar name");
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn a_flight_report_has_the_vehicle_cutoff_state_elements_captions_and_scaling_figures() {
    let dir = scratch("html");
    let html = dir.join("r.html");
    let out = kickturn(&[
        "fly",
        "problems/heavy-boosters-leo300.json",
        "--report",
        &html.to_string_lossy(),
    ]);
    ok(&out);
    let page = std::fs::read_to_string(&html).expect("report written");
    for part in [
        "<h2>Vehicle (input)</h2>",
        "Corvane solid booster",
        "vacuum Isp s",
        "<h2>Cutoff state</h2>",
        "inertial flight-path angle, deg",
        "osculating two-body elements",
        "right ascension of the ascending node",
        "argument of perigee, deg",
        "<figcaption>",
        "vacuum instantaneous impact point",
        "figure svg{max-width:100%;height:auto",
        "<th>rot</th>",
        "Preliminary design only",
    ] {
        assert!(page.contains(part), "report lacks {part}");
    }
    assert_eq!(
        page.matches("<figure").count(),
        page.matches("<svg").count(),
        "every figure in a captioned <figure>"
    );
    // The per-arc table has the text report's ten columns.
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(text.contains("Δspeed") && text.contains(" rot "));
    let head = page
        .split("<th>arc</th>")
        .nth(1)
        .and_then(|s| s.split("</tr>").next())
        .unwrap_or("");
    assert_eq!(head.matches("<th>").count(), 9, "{head}");
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn compare_and_trade_write_figures_and_reports() {
    let dir = scratch("study");
    let (cfig, chtml) = (dir.join("cmp"), dir.join("cmp.html"));
    let out = kickturn(&[
        "compare",
        "problems/medium-2stage-leo200.json",
        "problems/small-3stage-sso500.json",
        "--max-trajectories",
        "2000",
        "--plot",
        &cfig.to_string_lossy(),
        "--report",
        &chtml.to_string_lossy(),
    ]);
    ok(&out);
    let all = svgs(&cfig);
    let stems: Vec<&str> = all.iter().map(|a| a.0.as_str()).collect();
    assert_eq!(
        stems,
        ["compare_budget_1", "compare_budget_2", "compare_payload"]
    );
    let page = std::fs::read_to_string(&chtml).expect("compare report");
    assert!(page.contains("Brannock M2 to 200 km circular") && page.contains("<figcaption>"));
    assert_eq!(page.matches("<svg").count(), 3);
    assert!(page.contains("Preliminary design only"));

    let (tfig, thtml) = (dir.join("trade"), dir.join("trade.html"));
    let out = kickturn(&[
        "trade",
        "problems/medium-2stage-leo200.json",
        "--max-trajectories",
        "600",
        "--plot",
        &tfig.to_string_lossy(),
        "--report",
        &thtml.to_string_lossy(),
    ]);
    assert!(
        matches!(out.status.code(), Some(0 | 1)),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let all = svgs(&tfig);
    assert_eq!(all.len(), 1);
    assert!(svg_of(&all, "trade").contains("margin change [kg]"));
    let page = std::fs::read_to_string(&thtml).expect("trade report");
    assert!(page.contains("trade factors") && page.contains("<figcaption>"));
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn a_sweep_family_draws_one_payload_curve_per_value_and_reports_them() {
    let dir = scratch("family");
    let (figs, html) = (dir.join("figs"), dir.join("sweep.html"));
    let out = kickturn(&[
        "sweep",
        "problems/medium-2stage-leo200.json",
        "--altitude",
        "200:300:100",
        "--family",
        "inclination=51.6,60",
        "--max-trajectories",
        "2000",
        "--plot",
        &figs.to_string_lossy(),
        "--report",
        &html.to_string_lossy(),
    ]);
    ok(&out);
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(
        text.contains("payload kg by altitude_km (rows) and inclination_deg (columns)"),
        "{text}"
    );
    let all = svgs(&figs);
    let family = svg_of(&all, "sweep_family");
    for part in ["target inclination 51.6 deg", "target inclination 60 deg"] {
        assert!(family.contains(part), "legend lacks {part}");
    }
    // The margin has its own axis, not the payload's.
    assert!(svg_of(&all, "sweep_mass").contains("margin after reserves [kg]"));
    let page = std::fs::read_to_string(&html).expect("sweep report");
    assert_eq!(page.matches("<figure").count(), 3, "mass, losses, family");
    for bad in ["inclination", "altitude=300", "spin=1,2", "inclination=1,x"] {
        let out = kickturn(&[
            "sweep",
            "problems/medium-2stage-leo200.json",
            "--altitude",
            "200:300:100",
            "--family",
            bad,
        ]);
        assert_eq!(out.status.code(), Some(2), "--family {bad}");
        assert!(String::from_utf8_lossy(&out.stderr).contains("--family"));
    }
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn figure_format_picks_png_svg_or_pdf() {
    let dir = scratch("formats");
    let run = |formats: &str, sub: &str| {
        let figs = dir.join(sub);
        let out = kickturn(&[
            "fly",
            "problems/medium-2stage-leo200.json",
            "--plot",
            &figs.to_string_lossy(),
            "--figure-format",
            formats,
        ]);
        ok(&out);
        let mut names: Vec<String> = std::fs::read_dir(&figs)
            .map(|d| {
                d.filter_map(Result::ok)
                    .map(|e| e.file_name().to_string_lossy().to_string())
                    .collect()
            })
            .unwrap_or_default();
        names.sort();
        (figs, names)
    };
    let (figs, names) = run("pdf", "pdf");
    assert_eq!(names.len(), 10, "{names:?}");
    assert!(names.iter().all(|n| n.ends_with(".pdf")), "{names:?}");
    let pdf = std::fs::read(figs.join("loads.pdf")).expect("loads.pdf");
    // Source: ISO 32000-1:2008, 7.5.2 "File header": a PDF starts with "%PDF-".
    assert!(pdf.starts_with(b"%PDF-"));
    assert!(pdf.len() > 5_000, "loads.pdf only {} bytes", pdf.len());
    let (_, names) = run("svg", "svg");
    assert!(names.len() == 10 && names.iter().all(|n| n.ends_with(".svg")));
    let (_, names) = run("png,pdf", "both");
    assert_eq!(names.len(), 20);
    let out = kickturn(&[
        "fly",
        "problems/medium-2stage-leo200.json",
        "--plot",
        &dir.join("bad").to_string_lossy(),
        "--figure-format",
        "tiff",
    ]);
    assert_eq!(out.status.code(), Some(2));
    let _ = std::fs::remove_dir_all(&dir);
}
