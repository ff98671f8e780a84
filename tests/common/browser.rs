//! Render an HTML file in headless Chromium (Debian's `chromium`, installed by `.ci/run`):
//! a PNG screenshot, the DOM after loading, and every console message.

use std::io::Read;
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

/// What a render produced.
pub enum Rendered {
    /// No browser on this machine; the reason says what was looked for.
    Skipped(String),
    /// The page was rendered.
    Done {
        /// The serialised DOM after load.
        dom: String,
        /// Console lines Chromium logged for the page.
        console: Vec<String>,
        /// The screenshot.
        png: PathBuf,
    },
}

fn browser() -> Option<PathBuf> {
    if let Ok(p) = std::env::var("STEMCAST_CHROMIUM") {
        return Some(PathBuf::from(p));
    }
    [
        "/usr/bin/chromium",
        "/usr/bin/chromium-browser",
        "/usr/bin/google-chrome",
    ]
    .iter()
    .map(PathBuf::from)
    .find(|p| p.exists())
}

fn run(bin: &Path, profile: &Path, extra: &[String], url: &str) -> (String, String) {
    let mut child = Command::new(bin)
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
        ])
        .arg(format!("--user-data-dir={}", profile.display()))
        .args(extra)
        .arg(url)
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("start chromium");
    // Drain both pipes while waiting: a DOM larger than the pipe buffer (64 kB) would
    // otherwise block Chromium on its write and never let it exit.
    let drain = |pipe: Option<Box<dyn Read + Send>>| {
        std::thread::spawn(move || {
            let mut text = Vec::new();
            if let Some(mut p) = pipe {
                let _ = p.read_to_end(&mut text);
            }
            String::from_utf8_lossy(&text).into_owned()
        })
    };
    let out = drain(
        child
            .stdout
            .take()
            .map(|p| Box::new(p) as Box<dyn Read + Send>),
    );
    let err = drain(
        child
            .stderr
            .take()
            .map(|p| Box::new(p) as Box<dyn Read + Send>),
    );
    let start = Instant::now();
    while child.try_wait().expect("wait").is_none() {
        if start.elapsed() > Duration::from_secs(90) {
            let _ = child.kill();
            panic!("chromium did not finish within 90 s");
        }
        std::thread::sleep(Duration::from_millis(50));
    }
    (
        out.join().expect("stdout reader"),
        err.join().expect("stderr reader"),
    )
}

/// Render `html` to `png` (1280 px wide) and read back its DOM and console messages.
pub fn render(html: &Path, png: &Path) -> Rendered {
    let Some(bin) = browser() else {
        return Rendered::Skipped(
            "no Chromium at /usr/bin/chromium (install Debian's `chromium`, as .ci/run does, or set STEMCAST_CHROMIUM)".into(),
        );
    };
    let url = format!("file://{}", html.display());
    let profile = tempfile::tempdir().expect("profile dir");
    let (_, log) = run(
        &bin,
        profile.path(),
        &[
            "--window-size=1280,4000".into(),
            format!("--screenshot={}", png.display()),
        ],
        &url,
    );
    let profile = tempfile::tempdir().expect("profile dir");
    let (dom, log2) = run(&bin, profile.path(), &["--dump-dom".into()], &url);
    let console = log
        .lines()
        .chain(log2.lines())
        .filter(|l| l.contains(":CONSOLE"))
        .map(str::to_string)
        .collect();
    Rendered::Done {
        dom,
        console,
        png: png.to_path_buf(),
    }
}

/// A browser check that could not run: a failure when `.ci/run` asked for browser tests
/// (`STEMCAST_BROWSER_TEST` set), else a note on standard error so that `cargo test` on a
/// machine without Chromium stays self-contained.
pub fn skipped(reason: &str) {
    assert!(
        std::env::var_os("STEMCAST_BROWSER_TEST").is_none(),
        "STEMCAST_BROWSER_TEST is set but the browser check cannot run: {reason}"
    );
    eprintln!("browser check skipped: {reason}");
}
