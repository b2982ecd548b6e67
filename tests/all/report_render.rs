//! The reports rendered: where Debian's chromium is installed (always in
//! CI, by .ci/run) the demo page is rendered headless to a PNG, which the PNG
//! decoder must read at the requested window size and which must not be
//! blank (dark pixels for text and charts, many colours); and the terminal
//! report's correlated tastes and willingness-to-pay words, checked against
//! the analysis the library returns.

use sharecast::analysis::{self, Analysis};
use sharecast::estimate::Fit;
use sharecast::spec::Spec;

use crate::common::{commute_variant, express_variant, fit_spec, load, scratch, WTP_CORRELATED};
use crate::report_html::report;

/// Headless chromium, where installed: CI installs it (.ci/run) and must run this.
fn chromium() -> Option<std::path::PathBuf> {
    ["chromium", "chromium-browser"].iter().find_map(|b| {
        std::env::var_os("PATH").and_then(|p| {
            std::env::split_paths(&p)
                .map(|d| d.join(b))
                .find(|f| f.is_file())
        })
    })
}

#[test]
fn the_page_renders_headless_to_a_picture_that_is_not_blank() {
    let Some(browser) = chromium() else {
        assert_ne!(
            std::env::var("CI").as_deref(),
            Ok("true"),
            "CI must have chromium (installed by .ci/run)"
        );
        eprintln!("skipped: chromium is not installed on this machine (apt-get install chromium); CI runs this test");
        return;
    };
    let dir = scratch("report-render");
    report(
        &dir,
        "specs/grocery.toml",
        &["specs/scenarios/own_label_promo.toml"],
    );
    let png = dir.join("page.png");
    let (w, h) = (1000u32, 1400u32);
    let url = format!(
        "file://{}",
        dir.join("report.html").canonicalize().unwrap().display()
    );
    let out = std::process::Command::new(browser)
        .args([
            "--headless",
            "--no-sandbox",
            "--disable-gpu",
            "--hide-scrollbars",
            "--no-first-run",
            "--disable-dev-shm-usage",
        ])
        .arg(format!("--user-data-dir={}", dir.join("profile").display()))
        .arg(format!("--window-size={w},{h}"))
        .arg(format!("--screenshot={}", png.display()))
        .arg(&url)
        .output()
        .unwrap();
    assert!(
        png.is_file(),
        "no screenshot: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    // Source: the PNG decoder reads the picture chromium wrote.
    let decoder = png::Decoder::new(std::io::BufReader::new(std::fs::File::open(&png).unwrap()));
    let mut reader = decoder.read_info().unwrap();
    let mut buf = vec![0; reader.output_buffer_size().unwrap()];
    let info = reader.next_frame(&mut buf).unwrap();
    assert_eq!(
        (info.width, info.height),
        (w, h),
        "the picture has the window's size"
    );
    let px = info.color_type.samples();
    let pixels: Vec<&[u8]> = buf[..info.buffer_size()].chunks(px).collect();
    let dark = pixels
        .iter()
        .filter(|p| p.iter().take(3).map(|&c| c as u32).sum::<u32>() < 3 * 128)
        .count();
    let distinct: std::collections::HashSet<&[u8]> = pixels.iter().copied().collect();
    assert!(
        dark as f64 > 0.005 * pixels.len() as f64,
        "the page is blank: {dark} dark pixels of {}",
        pixels.len()
    );
    assert!(distinct.len() > 16, "only {} colours", distinct.len());
}

/// A spec fitted and analysed in-process, with its terminal report.
fn text_report(spec: &str) -> (Spec, Fit, Analysis, String) {
    let (spec, ds) = load(spec);
    let fit = fit_spec(&spec, &ds);
    let options = analysis::Options {
        draws: 100,
        ..Default::default()
    };
    let a = analysis::analyse(&spec, &fit, &ds, &options).unwrap();
    let text = sharecast::report::text::report(&spec, &fit, Some(&a), None, false);
    (spec, fit, a, text)
}

/// The lines of `text` from the line holding `from` on.
fn after<'a>(text: &'a str, from: &str) -> Vec<&'a str> {
    text.lines().skip_while(|l| !l.contains(from)).collect()
}

#[test]
fn the_text_report_shows_correlated_tastes_as_the_analysis_has_them() {
    let dir = scratch("text-correlated");
    let spec = express_variant(
        &dir,
        "correlated.toml",
        "correlated = [\"asc_rail\", \"time\", \"cost\"]",
        None,
    );
    let (_, _, a, text) = text_report(&spec);
    let c = a.correlations.as_ref().expect("correlations");
    assert_eq!(c.coefficients, ["asc_rail", "time", "cost"]);
    assert!(
        text.contains("tastes that move together: asc_rail, time, cost"),
        "{text}"
    );
    // The normals' matrix: its corner, then time's row holds corr(time,
    // asc_rail) ± s.e. as the analysis returned it (three decimals).
    let normals = after(&text, "normal of ↓ / normal of →");
    let want = &c.correlations[1][0];
    let cell = format!("{:.3}±{:.3}", want.value, want.std_error);
    let time = normals
        .iter()
        .find(|l| l.trim_start().starts_with("time "))
        .unwrap();
    assert!(time.contains(&cell), "`{cell}` not in `{time}`");
    // cost is negative-lognormal: the coefficients' own correlations follow,
    // from the lognormal's closed-form moments, and differ from the normals'.
    assert!(text.contains("correlations of the coefficients themselves"));
    assert!(text.contains("closed-form moments"));
    let own = after(&text, "coefficient ↓ / coefficient →");
    let want = &c.coefficient_correlations[2][1];
    let cell = format!("{:.3}±{:.3}", want.value, want.std_error);
    let cost = own
        .iter()
        .find(|l| l.trim_start().starts_with("cost "))
        .unwrap();
    assert!(cost.contains(&cell), "`{cell}` not in `{cost}`");
    // The spread of each underlying normal and the independence test's line.
    let sd = &c.std_devs[0];
    assert!(text.contains(&sharecast::report::value_se(sd.value, sd.std_error, " ± ")));
    let t = c.independence.as_ref().unwrap();
    assert!(
        text.contains(&format!("statistic {:.4}, {} df, p ", t.statistic, t.df)),
        "{text}"
    );
    assert_eq!(t.df, 3, "three correlations among three coefficients");

    // Two normal coefficients correlated: no second matrix (the coefficients'
    // correlations are the normals' own, a fact of the normal).
    let spec = express_variant(
        &dir,
        "normals.toml",
        "correlated = [\"asc_rail\", \"time\"]",
        None,
    );
    let (_, _, a, text) = text_report(&spec);
    assert_eq!(a.correlations.unwrap().coefficients, ["asc_rail", "time"]);
    assert!(text.contains("normal of ↓ / normal of →"));
    assert!(!text.contains("coefficient ↓ / coefficient →"), "{text}");

    // Independent random coefficients: no such section.
    let spec = express_variant(&dir, "independent.toml", "", None);
    let (_, _, a, text) = text_report(&spec);
    assert!(a.correlations.is_none());
    assert!(!text.contains("tastes that move together"), "{text}");
    assert!(!text.contains("normal of ↓"));
}

#[test]
fn the_text_report_says_which_estimate_is_the_price_scale_and_what_the_values_are_in() {
    let dir = scratch("text-willingness");
    // A logit in willingness-to-pay space.
    let spec = commute_variant(
        &dir,
        "wtp.toml",
        "space = \"willingness\"\nprice = \"cost\"",
    );
    let (_, fit, a, text) = text_report(&spec);
    assert!(fit.family.willingness().is_some());
    assert!(
        text.contains("willingness-to-pay space: `cost` is the price scale"),
        "{text}"
    );
    let row = |name: &str| {
        text.lines()
            .find(|l| l.starts_with(&format!("  │ {name} ")))
            .unwrap_or_else(|| panic!("no row `{name}`:\n{text}"))
            .to_string()
    };
    assert!(row("cost").ends_with("· price scale"), "{}", row("cost"));
    assert!(row("time").ends_with("· cost per unit of time"));
    assert!(row("asc_bus").ends_with("· cost for choosing bus rather than car"));
    assert!(row("income_bike").ends_with("· cost per unit of income, for bike"));
    // Each ratio over the price carries the analysis's note.
    let note = a.ratios[0]
        .note
        .as_ref()
        .expect("a note in willingness space");
    assert!(text.contains(note.as_str()), "{text}");

    // A mixed logit in willingness-to-pay space: its random coefficients
    // read as the price scale and as values too.
    let spec = express_variant(&dir, "wtp_mixed.toml", WTP_CORRELATED, Some("lognormal"));
    let (_, _, _, text) = text_report(&spec);
    assert!(text.contains("willingness-to-pay space: `cost` is the price scale"));
    let line = |start: &str| {
        text.lines()
            .find(|l| l.starts_with(start))
            .unwrap_or_else(|| panic!("no line `{start}`:\n{text}"))
            .to_string()
    };
    assert!(line("  cost · lognormal").ends_with("· the price scale"));
    assert!(line("  time · normal").ends_with("· a value in cost per unit of time"));
    assert!(line("  │ time_spread ").ends_with("· cost per unit of time"));
    assert!(text.contains("tastes that move together"));

    // Preference space: none of these words.
    let spec = commute_variant(&dir, "preference.toml", "");
    let (_, fit, a, text) = text_report(&spec);
    assert!(fit.family.willingness().is_none());
    assert!(a.ratios.iter().all(|r| r.note.is_none()));
    for gone in ["willingness-to-pay space", "price scale", "per unit of"] {
        assert!(
            !text.contains(gone),
            "`{gone}` in a preference-space report"
        );
    }
}
