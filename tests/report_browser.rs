//! The HTML report, rendered in a real headless browser.

use crate::util::{run_in, temp_dir};
use std::path::Path;
use std::process::Command;

/// The browser, found by the probe `.ci/run` uses too: `chromium --version`
/// succeeds.
fn chromium() -> Option<&'static str> {
    ["chromium", "chromium-browser"].into_iter().find(|c| {
        Command::new(c)
            .arg("--version")
            .output()
            .is_ok_and(|o| o.status.success())
    })
}

/// Set by `.ci/run`: there the browser test must run, never skip.
const REQUIRE: &str = "QUENCHWISE_REQUIRE_BROWSER";

fn png_size(bytes: &[u8]) -> (u32, u32) {
    // PNG signature (8 bytes), IHDR length and type (8), then width and height.
    assert_eq!(&bytes[1..4], b"PNG", "not a PNG");
    let be = |i: usize| u32::from_be_bytes([bytes[i], bytes[i + 1], bytes[i + 2], bytes[i + 3]]);
    (be(16), be(20))
}

fn screenshot(browser: &str, page: &Path, png: &Path, profile: &Path) -> String {
    let out = Command::new(browser)
        .args([
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
            "--hide-scrollbars",
            "--window-size=1200,1800",
        ])
        .arg(format!("--user-data-dir={}", profile.display()))
        .arg(format!("--screenshot={}", png.display()))
        .arg(format!("file://{}", page.display()))
        .output()
        .expect("chromium runs");
    String::from_utf8_lossy(&out.stderr).into_owned()
}

#[test]
fn report_renders_in_a_headless_browser() {
    let Some(browser) = chromium() else {
        assert!(
            std::env::var(REQUIRE).is_err(),
            "{REQUIRE} is set but `chromium --version` fails: the browser test cannot run"
        );
        println!("SKIPPED report_renders_in_a_headless_browser: no chromium installed (apt-get install chromium)");
        return;
    };
    let d = temp_dir("report-browser");
    let cfg = crate::util::root().join("configs/demo-screen.toml");
    run_in(
        &d,
        &[
            "screen",
            cfg.to_str().unwrap(),
            "--out",
            "out",
            "--threads",
            "2",
        ],
    )
    .code(0)
    .stdout_has("report:");
    let page = d.join("out/report.html");
    let html = std::fs::read_to_string(&page).unwrap();
    // Namespaces (xmlns="http://www.w3.org/...") are names, not fetches; nothing may be loaded.
    for fetch in [
        "src=\"http",
        "href=\"http",
        "url(http",
        "@import",
        "<script",
        "<link",
    ] {
        assert!(
            !html.contains(fetch),
            "the report must not need the network: found {fetch}"
        );
    }
    // Well-formed XML (the DOCTYPE aside), with one picture per trade-off and
    // five per shortlisted recipe (TTT, fraction vs rate, composition,
    // viscosity with its fixpoints, I and U).
    let body = html.trim_start_matches("<!DOCTYPE html>");
    crate::util::check_xml(body).unwrap_or_else(|e| panic!("report.html is not well-formed: {e}"));
    let recipes = std::fs::read_to_string(d.join("out/shortlist.csv"))
        .unwrap()
        .lines()
        .count()
        - 1;
    assert!(recipes > 0);
    assert_eq!(html.matches("<svg").count(), 2 + 5 * recipes);
    for needle in [
        "Shortlist",
        "The job",
        "Constraint summary",
        "Safety.",
        "<svg",
        "TTT diagram, rank 1",
        "Batch sheet",
    ] {
        assert!(html.contains(needle), "report lacks {needle}");
    }
    std::fs::write(
        d.join("blank.html"),
        "<!DOCTYPE html><html><body></body></html>",
    )
    .unwrap();
    let png = d.join("report.png");
    let log = screenshot(browser, &page, &png, &d.join("profile"));
    let blank = d.join("blank.png");
    screenshot(browser, &d.join("blank.html"), &blank, &d.join("profile2"));
    let bytes =
        std::fs::read(&png).unwrap_or_else(|_| panic!("no screenshot; browser said:\n{log}"));
    assert_eq!(png_size(&bytes), (1200, 1800));
    let blank_len = std::fs::metadata(&blank).unwrap().len() as usize;
    assert!(
        bytes.len() > 5 * blank_len,
        "screenshot looks blank: {} bytes vs {blank_len} for an empty page",
        bytes.len()
    );
}
