//! The report page in a real browser (issue 8): headless Chromium loads
//! `index.html` from disk with no network, saves a screenshot and a PDF
//! print, and the test checks the screenshot is not blank and the browser
//! logged no console message (the page has no script, so any console line
//! is a fault: a blocked resource, a policy violation).
//!
//! `.ci/run` installs Debian's `chromium`; outside CI, where it is absent,
//! the test says so on stderr and passes without checking. Two control
//! pages prove the checks can fail: one that logs to the console, one that
//! is blank. The last screenshot is kept in `target/report-browser/` to look
//! at.

mod common;
mod report_support;

use common::{furrow, stderr};
use std::path::{Path, PathBuf};
use std::process::Command;

fn chromium() -> Option<PathBuf> {
    ["/usr/bin/chromium", "/usr/bin/chromium-browser"]
        .iter()
        .map(PathBuf::from)
        .find(|p| p.exists())
}

/// Chromium on `page`: (stderr, screenshot PNG bytes, PDF bytes).
fn render(browser: &Path, page: &Path, work: &Path) -> (String, Vec<u8>, Vec<u8>) {
    let profile = tempfile::tempdir().expect("a profile folder");
    let shot = work.join("shot.png");
    let pdf = work.join("page.pdf");
    let url = format!("file://{}", page.display());
    let common = [
        "--headless",
        "--no-sandbox",
        "--disable-gpu",
        "--disable-quic",
        "--no-first-run",
        "--disable-background-networking",
        "--disable-component-update",
        "--disable-sync",
        "--enable-logging=stderr",
        "--v=0",
    ];
    let run = |extra: &[String]| {
        let o = Command::new(browser)
            .args(common)
            .arg(format!("--user-data-dir={}", profile.path().display()))
            .args(extra)
            .arg(&url)
            .output()
            .expect("chromium runs");
        assert!(o.status.success(), "chromium failed: {}", stderr(&o));
        stderr(&o)
    };
    let mut log = run(&[
        "--window-size=1280,4000".into(),
        format!("--screenshot={}", shot.display()),
    ]);
    log += &run(&[
        "--no-pdf-header-footer".into(),
        format!("--print-to-pdf={}", pdf.display()),
    ]);
    let png = std::fs::read(&shot).expect("a screenshot was written");
    let pdf = std::fs::read(&pdf).expect("a PDF was written");
    (log, png, pdf)
}

/// Console lines in Chromium's log (`...:CONSOLE...] "message", source: ...`).
fn console_lines(log: &str) -> Vec<&str> {
    log.lines().filter(|l| l.contains(":CONSOLE")).collect()
}

/// Share of pixels that differ from the top-left pixel (the page
/// background), and the number of distinct colours.
fn ink(png_bytes: &[u8]) -> (f64, usize) {
    let decoder = png::Decoder::new(std::io::Cursor::new(png_bytes));
    let mut reader = decoder.read_info().expect("a PNG");
    let mut buf = vec![0; reader.output_buffer_size().expect("a buffer size")];
    let info = reader.next_frame(&mut buf).expect("a frame");
    let channels = info.color_type.samples();
    let px: Vec<&[u8]> = buf[..info.buffer_size()].chunks(channels).collect();
    let bg = px[0];
    let inked = px.iter().filter(|p| **p != bg).count();
    let mut colours: Vec<&[u8]> = px.clone();
    colours.sort_unstable();
    colours.dedup();
    (inked as f64 / px.len() as f64, colours.len())
}

fn skip_reason() -> Option<String> {
    if chromium().is_some() {
        return None;
    }
    if std::env::var("CI").is_ok_and(|v| v == "true") {
        panic!("chromium is missing under CI: .ci/run should install Debian's chromium package");
    }
    Some("skipped: no chromium at /usr/bin/chromium (install Debian's chromium package to run this test)".into())
}

#[test]
fn the_report_page_renders_with_no_console_message() {
    if let Some(why) = skip_reason() {
        eprintln!("report_browser: {why}");
        return;
    }
    let browser = chromium().expect("checked above");
    let (_tmp, dir) = report_support::demo(true);
    let o = furrow(
        &dir,
        &[
            "report",
            "plan.toml",
            "--scenarios",
            "500",
            "--out",
            "out",
            "--quiet",
        ],
    );
    assert!(o.status.success(), "report failed: {}", stderr(&o));
    let keep = Path::new(env!("CARGO_MANIFEST_DIR")).join("target/report-browser");
    std::fs::create_dir_all(&keep).expect("a folder for the screenshot");
    let (log, png, pdf) = render(&browser, &dir.join("out/index.html"), &keep);
    assert!(
        console_lines(&log).is_empty(),
        "console: {:?}",
        console_lines(&log)
    );
    let (share, colours) = ink(&png);
    // The page is mostly text, tables and charts on white: a few per cent
    // of the pixels carry ink, in many colours (text anti-aliasing, the
    // palette). A blank or failed page has one colour.
    assert!(
        share > 0.02,
        "only {share:.4} of the pixels differ from the background"
    );
    assert!(colours > 50, "only {colours} colours in the screenshot");
    assert!(pdf.starts_with(b"%PDF"), "the print is not a PDF");
    // More than one page when printed (the report is long), counted from
    // the PDF's page objects (`/Type /Page`, not `/Pages`; ISO 32000-1,
    // 7.7.3.3).
    let page_objects = regex::bytes::Regex::new(r"/Type\s*/Page[^s]").expect("a pattern");
    let pages = page_objects.find_iter(&pdf).count();
    assert!(pages >= 2, "the print has {pages} pages");
}

#[test]
fn the_checks_catch_a_console_message_and_a_blank_page() {
    if let Some(why) = skip_reason() {
        eprintln!("report_browser: {why}");
        return;
    }
    let browser = chromium().expect("checked above");
    let tmp = tempfile::tempdir().expect("a temporary folder");
    let noisy = tmp.path().join("noisy.html");
    std::fs::write(
        &noisy,
        "<!doctype html><p>text</p><script>console.error('a fault')</script>",
    )
    .expect("write a page");
    let (log, _, _) = render(&browser, &noisy, tmp.path());
    // Once for the screenshot, once for the print.
    assert_eq!(console_lines(&log).len(), 2, "{log}");
    let blank = tmp.path().join("blank.html");
    std::fs::write(&blank, "<!doctype html><title>t</title>").expect("write a page");
    let (_, png, _) = render(&browser, &blank, tmp.path());
    let (share, colours) = ink(&png);
    assert!(share < 0.001 && colours < 3, "{share} {colours}");
}
