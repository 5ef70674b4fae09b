//! The audit page in a real browser: a small simulated recording is audited, the page is
//! opened by headless Chromium (`--dump-dom` and `--screenshot`), and the test checks that
//! the browser read the page (the dumped DOM holds every listed track's `data-track`
//! element and every picture's `<img>`), that every picture file exists and decodes as a
//! PNG (PNG specification, ISO/IEC 15948:2004: the 8-byte signature and the IHDR chunk
//! first), that the screenshot is a non-blank PNG, and that Chromium logged no error about
//! loading the page or its files.
//!
//! Without a `chromium` binary the test prints why and passes; with
//! `ROTORSIFT_REQUIRE_BROWSER=1` (set by .ci/run, which installs Debian's chromium) a
//! missing browser fails it.

mod common;

use std::path::{Path, PathBuf};
use std::process::Command;

use common::*;

fn find_browser() -> Option<PathBuf> {
    if let Ok(p) = std::env::var("ROTORSIFT_BROWSER") {
        return Some(PathBuf::from(p));
    }
    [
        "/usr/bin/chromium",
        "/usr/bin/chromium-browser",
        "/usr/bin/google-chrome",
    ]
    .iter()
    .map(PathBuf::from)
    .find(|p| p.is_file())
}

/// Decodes a PNG fully; returns (width, height, whether any two pixels differ).
fn decode_png(path: &Path) -> (u32, u32, bool) {
    let bytes = std::fs::read(path).unwrap_or_else(|e| panic!("{}: {e}", path.display()));
    assert_eq!(
        &bytes[..8],
        b"\x89PNG\r\n\x1a\n",
        "{}: PNG signature",
        path.display()
    );
    let mut dec = png::Decoder::new(std::io::Cursor::new(bytes));
    dec.set_transformations(png::Transformations::EXPAND);
    let mut reader = dec.read_info().expect("PNG header");
    let mut buf = vec![0; reader.output_buffer_size()];
    let info = reader.next_frame(&mut buf).expect("PNG data decodes");
    let data = &buf[..info.buffer_size()];
    let px = info.color_type.samples()
        * if info.bit_depth == png::BitDepth::Sixteen {
            2
        } else {
            1
        };
    let first = &data[..px];
    let varied = data.chunks(px).any(|p| p != first);
    (info.width, info.height, varied)
}

/// Chromium's stderr lines that are errors about the page or its files: a failed load
/// (`net::ERR_...`, "Failed to load"), or an ERROR line naming a file URL, the page or a
/// picture. Its sandbox, GPU, D-Bus and font messages in a container name none of these,
/// so they are left out without a list of their wordings.
fn page_errors(stderr: &str) -> Vec<String> {
    stderr
        .lines()
        .filter(|l| {
            l.contains("net::ERR_")
                || l.contains("Failed to load")
                || (l.contains("ERROR")
                    && (l.contains("file://") || l.contains("index.html") || l.contains(".png")))
        })
        .map(str::to_string)
        .collect()
}

#[test]
fn audit_page_loads_in_headless_chromium() {
    let Some(browser) = find_browser() else {
        let msg = "no chromium binary found (apt-get install chromium, or set ROTORSIFT_BROWSER)";
        if std::env::var("ROTORSIFT_REQUIRE_BROWSER").as_deref() == Ok("1") {
            panic!("ROTORSIFT_REQUIRE_BROWSER=1 but {msg}");
        }
        eprintln!("skipped: {msg}");
        return;
    };
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let scene = format!(
        "name = \"hover\"\nduration_s = 0.8\nseed = 3\n\n{}{}",
        k24_radar("ci16_le"),
        rotorcraft(
            "object",
            "quad-1",
            80.0,
            "{ type = \"hover\", position = [35.0, 10.0, 5.0], sway_m = 0.05, sway_period_s = 3.0 }"
        )
    );
    let meta = simulate(dir, "hover", &scene, "rec", None).remove(0);
    let out = dir.join("audit");
    // --low-confidence 1.0 lists every track, so the page has pictures to load
    ok(&run(&[
        "audit",
        meta.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
        "--low-confidence",
        "1.0",
    ]));
    let index = out.join("index.html");
    let html = std::fs::read_to_string(&index).unwrap();
    let tracks = html
        .matches("<div class=\"track\" data-track=\"hover:")
        .count();
    assert!(
        tracks >= 1,
        "the audit lists the hovering rotorcraft:\n{html}"
    );
    let srcs: Vec<String> = html
        .split("<img src=\"")
        .skip(1)
        .map(|p| p[..p.find('"').unwrap()].to_string())
        .collect();
    assert!(srcs.len() >= 2, "the page shows pictures");
    for s in &srcs {
        let (w, h, varied) = decode_png(&out.join(s));
        assert!(w > 0 && h > 0 && varied, "{s}: a real picture");
    }

    let url = format!("file://{}", index.display());
    let base = |args: &[&str]| {
        let mut c = Command::new(&browser);
        c.args([
            "--headless",
            "--disable-gpu",
            "--no-sandbox",
            "--no-first-run",
            "--allow-file-access-from-files",
            "--enable-logging=stderr",
            "--v=0",
        ]);
        c.args(args);
        c.env("HOME", dir);
        c.output().expect("run chromium")
    };
    let dom = base(&["--dump-dom", &url]);
    assert!(
        dom.status.success(),
        "chromium --dump-dom failed: {}",
        stderr(&dom)
    );
    let dumped = stdout(&dom);
    assert_eq!(
        dumped.matches("data-track=\"hover:").count(),
        tracks,
        "the browser's DOM holds every listed track"
    );
    for s in &srcs {
        assert!(dumped.contains(&format!("src=\"{s}\"")), "{s} in the DOM");
    }
    let errs = page_errors(&stderr(&dom));
    assert!(errs.is_empty(), "chromium logged errors: {errs:#?}");

    let shot = dir.join("shot.png");
    let o = base(&[
        &format!("--screenshot={}", shot.display()),
        "--window-size=1280,2400",
        "--hide-scrollbars",
        &url,
    ]);
    assert!(
        o.status.success(),
        "chromium --screenshot failed: {}",
        stderr(&o)
    );
    let errs = page_errors(&stderr(&o));
    assert!(errs.is_empty(), "chromium logged errors: {errs:#?}");
    let (w, h, varied) = decode_png(&shot);
    assert_eq!((w, h), (1280, 2400), "screenshot size");
    assert!(varied, "the screenshot is not blank");
    if let Ok(keep) = std::env::var("ROTORSIFT_KEEP_SCREENSHOT") {
        let _ = std::fs::copy(&shot, keep);
    }
}
