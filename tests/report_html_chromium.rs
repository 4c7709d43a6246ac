//! report.html in a real browser: headless Chromium (Debian package `chromium`) loads the page
//! of a hand-built outcome (invented demo numbers, see report_demo) without console errors or
//! failed loads, shows the verdict, and takes a 1280 px wide screenshot. Installs Chromium
//! through scripts/ensure_chromium.sh when it is missing (root only).

mod report_demo;

use std::io::Read;
use std::path::{Path, PathBuf};
use std::process::{Command, Output, Stdio};
use std::sync::OnceLock;
use std::thread::JoinHandle;
use std::time::{Duration, Instant};

const BROWSER_NAMES: [&str; 2] = ["chromium", "chromium-browser"];

fn on_path(name: &str) -> Option<PathBuf> {
    let path = std::env::var_os("PATH")?;
    std::env::split_paths(&path)
        .map(|dir| dir.join(name))
        .find(|candidate| candidate.is_file())
}

/// The browser, installed at most once per test run (the tests run in parallel threads and
/// two package installs at once would fight over the package manager's lock).
fn chromium() -> PathBuf {
    static BROWSER: OnceLock<PathBuf> = OnceLock::new();
    BROWSER.get_or_init(find_or_install_chromium).clone()
}

fn find_or_install_chromium() -> PathBuf {
    if let Some(found) = BROWSER_NAMES.iter().find_map(|n| on_path(n)) {
        return found;
    }
    let script = Path::new(env!("CARGO_MANIFEST_DIR")).join("scripts/ensure_chromium.sh");
    let status = Command::new("bash").arg(&script).status();
    assert!(
        matches!(status, Ok(s) if s.success()),
        "headless Chromium is needed for this test and could not be installed by {}: install \
         the Debian package `chromium` (apt-get install -y chromium)",
        script.display()
    );
    BROWSER_NAMES
        .iter()
        .find_map(|n| on_path(n))
        .expect("chromium on PATH after installation")
}

/// Runs Chromium headless on `page` with `extra` flags; kills it after two minutes.
fn run_chromium(page: &Path, profile: &Path, extra: &[String]) -> Output {
    let mut command = Command::new(chromium());
    command
        .args([
            "--headless",
            "--no-sandbox",
            "--disable-gpu",
            "--disable-quic",
            "--no-first-run",
            "--disable-background-networking",
            "--disable-component-update",
            "--disable-sync",
            "--disable-extensions",
            "--hide-scrollbars",
            "--host-resolver-rules=MAP * ~NOTFOUND",
            "--enable-logging=stderr",
            "--v=1",
        ])
        .arg(format!("--user-data-dir={}", profile.display()))
        .args(extra)
        .arg(format!("file://{}", page.display()))
        .stdin(Stdio::null())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped());
    let mut child = command.spawn().expect("start chromium");
    // Drain both pipes while waiting: a full pipe would stall the browser.
    let stdout = drain(child.stdout.take().expect("stdout piped"));
    let stderr = drain(child.stderr.take().expect("stderr piped"));
    let deadline = Instant::now() + Duration::from_secs(120);
    let status = loop {
        if let Some(status) = child.try_wait().expect("poll chromium") {
            break status;
        }
        if Instant::now() > deadline {
            let _ = child.kill();
            let _ = child.wait();
            panic!("chromium did not finish within two minutes");
        }
        std::thread::sleep(Duration::from_millis(50));
    };
    Output {
        status,
        stdout: stdout.join().expect("stdout reader"),
        stderr: stderr.join().expect("stderr reader"),
    }
}

fn drain(mut pipe: impl Read + Send + 'static) -> JoinHandle<Vec<u8>> {
    std::thread::spawn(move || {
        let mut bytes = Vec::new();
        let _ = pipe.read_to_end(&mut bytes);
        bytes
    })
}

/// Hosts of Chromium's own background services: their requests come from the browser, never
/// from the page, and `--host-resolver-rules` keeps them off the network.
const BROWSER_SERVICE_HOSTS: [&str; 5] = [
    "google.com/",
    "googleapis.com/",
    "gstatic.com/",
    "gvt1.com/",
    "googleusercontent.com/",
];

/// Problems in Chromium's verbose log (`--v=1`): script errors on the console, and every load
/// besides the page itself (local files through `FileURLLoader`, network requests through
/// `NotifyBeforeURLRequest`), since a self-contained page loads nothing else.
fn page_problems(log: &str, page: &Path) -> Vec<String> {
    let page_url = format!("file://{}", page.display());
    let mut problems = Vec::new();
    for line in log.lines() {
        if line.contains("CONSOLE")
            && (line.contains("Uncaught") || line.contains("rror") || line.contains("Failed"))
        {
            problems.push(line.to_string());
        }
        if let Some((_, url)) = line.split_once("FileURLLoader::Start: ") {
            if url.trim() != page_url {
                problems.push(format!("loads local file {url}"));
            }
        }
        if let Some((_, url)) = line.split_once("NotifyBeforeURLRequest: ") {
            let host_path = url.split("://").nth(1).unwrap_or(url);
            let host = host_path.split('/').next().unwrap_or("");
            let service = BROWSER_SERVICE_HOSTS
                .iter()
                .any(|h| format!("{host}/").ends_with(h));
            if !service {
                problems.push(format!("requests {url}"));
            }
        }
    }
    problems
}

fn write_page(dir: &Path) -> PathBuf {
    let page = dir.join("report.html");
    for (name, bytes) in mountdrift::report::audit_files(&report_demo::shifted_outcome()).unwrap() {
        std::fs::write(dir.join(name), bytes).unwrap();
    }
    page
}

/// Width and height from a PNG's IHDR chunk.
fn png_size(bytes: &[u8]) -> (u32, u32) {
    assert_eq!(&bytes[..8], b"\x89PNG\r\n\x1a\n", "a PNG file");
    let be = |at: usize| u32::from_be_bytes(bytes[at..at + 4].try_into().unwrap());
    (be(16), be(20))
}

#[test]
fn chromium_loads_the_report_and_shows_the_verdict() {
    let dir = tempfile::tempdir().unwrap();
    let page = write_page(dir.path());
    let profile = dir.path().join("profile-dom");
    let output = run_chromium(&page, &profile, &["--dump-dom".into()]);
    let dom = String::from_utf8_lossy(&output.stdout);
    let log = String::from_utf8_lossy(&output.stderr);
    assert!(output.status.success(), "chromium failed: {log}");
    let problems = page_problems(&log, &page);
    assert!(problems.is_empty(), "page problems: {problems:?}");
    assert!(
        dom.contains("id=\"verdict\">SHIFTED</div>"),
        "verdict missing from the DOM"
    );
    assert!(dom.contains("gate FAIL"));
    assert!(dom.contains("Cautions"));
    assert_eq!(
        dom.matches("<svg ").count(),
        4,
        "the four plots are in the DOM"
    );
}

#[test]
fn chromium_screenshot_at_1280_px() {
    let dir = tempfile::tempdir().unwrap();
    let page = write_page(dir.path());
    let shot = dir.path().join("report.png");
    let profile = dir.path().join("profile-shot");
    let flags = [
        format!("--screenshot={}", shot.display()),
        "--window-size=1280,2400".to_string(),
    ];
    let output = run_chromium(&page, &profile, &flags);
    let log = String::from_utf8_lossy(&output.stderr);
    assert!(output.status.success(), "chromium failed: {log}");
    let problems = page_problems(&log, &page);
    assert!(problems.is_empty(), "page problems: {problems:?}");
    let png = std::fs::read(&shot).expect("screenshot written");
    assert_eq!(png_size(&png).0, 1280);
    // A blank page compresses to a few kilobytes; the report with plots is far larger.
    assert!(png.len() > 100_000, "screenshot of {} bytes", png.len());
    if let Some(keep) = std::env::var_os("MOUNTDRIFT_KEEP_SCREENSHOT") {
        std::fs::copy(&shot, keep).unwrap();
    }
}

#[test]
fn the_log_check_catches_a_broken_page() {
    // Control: a page with a script error, a missing local file and an outside request must be
    // caught by the same check.
    let dir = tempfile::tempdir().unwrap();
    let page = dir.path().join("broken.html");
    std::fs::write(
        &page,
        "<!DOCTYPE html><html><head><link rel=\"stylesheet\" href=\"missing.css\"></head>\
         <body><p>broken</p><img src=\"https://example.invalid/a.png\">\
         <script>undefinedFunction()</script></body></html>",
    )
    .unwrap();
    let output = run_chromium(&page, &dir.path().join("profile"), &["--dump-dom".into()]);
    let problems = page_problems(&String::from_utf8_lossy(&output.stderr), &page);
    let found = |needle: &str| problems.iter().any(|p| p.contains(needle));
    assert!(found("Uncaught ReferenceError"), "{problems:?}");
    assert!(found("missing.css"), "{problems:?}");
    assert!(found("example.invalid"), "{problems:?}");
}
