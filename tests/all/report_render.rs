//! The HTML report rendered: where Debian's chromium is installed (always in
//! CI, by .ci/run) the demo page is rendered headless to a PNG, which the PNG
//! decoder must read at the requested window size and which must not be
//! blank (dark pixels for text and charts, many colours).

use crate::common::scratch;
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
