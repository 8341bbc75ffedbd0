//! The report in a real browser: headless Chromium loads it from disk with the network closed,
//! and the test checks that nothing is logged as an error, that every chart is laid out with
//! a size and drawn content, that a screenshot shows more than a blank page, and that the page
//! prints to PDF. It speaks the Chrome DevTools Protocol over a WebSocket.
//!
//! Chromium comes from Debian's `chromium` package (`.ci/run` installs it). Without it the
//! test says so and passes, unless `CAPSTACK_REQUIRE_BROWSER` is set (CI sets it), when it
//! fails. `CAPSTACK_SCREENSHOTS=DIR` keeps the screenshots and the PDF for a person to see.

mod common;

use base64::Engine;
use serde_json::{json, Value};
use std::io::{BufRead, BufReader};
use std::net::TcpStream;
use std::path::{Path, PathBuf};
use std::process::{Child, Command, Stdio};
use std::sync::mpsc;
use std::time::{Duration, Instant};
use tungstenite::stream::MaybeTlsStream;
use tungstenite::{Message, WebSocket};

const TIMEOUT: Duration = Duration::from_secs(60);

fn find_chromium() -> Option<PathBuf> {
    if let Some(p) = std::env::var_os("CAPSTACK_CHROMIUM") {
        return Some(PathBuf::from(p));
    }
    let path = std::env::var_os("PATH")?;
    for dir in std::env::split_paths(&path) {
        for name in ["chromium", "chromium-browser", "google-chrome"] {
            let p = dir.join(name);
            if p.is_file() {
                return Some(p);
            }
        }
    }
    None
}

/// Chromium under the DevTools protocol, one page attached.
struct Browser {
    child: Child,
    ws: WebSocket<MaybeTlsStream<TcpStream>>,
    next_id: u64,
    session: Option<String>,
    events: Vec<Value>,
    _profile: tempfile::TempDir,
}

impl Browser {
    fn launch(chromium: &Path) -> Browser {
        let profile = tempfile::tempdir().unwrap();
        // The flags keep a headless Chromium from reaching for the network at start.
        let mut child = Command::new(chromium)
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
                "--remote-debugging-port=0",
            ])
            .arg(format!("--user-data-dir={}", profile.path().display()))
            .arg("about:blank")
            .stdout(Stdio::null())
            .stderr(Stdio::piped())
            .spawn()
            .expect("start chromium");
        let stderr = child.stderr.take().unwrap();
        let (tx, rx) = mpsc::channel();
        std::thread::spawn(move || {
            for line in BufReader::new(stderr).lines().map_while(Result::ok) {
                if let Some(url) = line.split("DevTools listening on ").nth(1) {
                    let _ = tx.send(url.trim().to_string());
                }
            }
        });
        let url = rx
            .recv_timeout(TIMEOUT)
            .expect("chromium did not open its DevTools endpoint");
        let (ws, _) = tungstenite::connect(url.as_str()).expect("connect to DevTools");
        if let MaybeTlsStream::Plain(s) = ws.get_ref() {
            s.set_read_timeout(Some(TIMEOUT)).unwrap();
        }
        let mut b = Browser {
            child,
            ws,
            next_id: 0,
            session: None,
            events: Vec::new(),
            _profile: profile,
        };
        let target = b.call("Target.createTarget", json!({"url": "about:blank"}));
        let attached = b.call(
            "Target.attachToTarget",
            json!({"targetId": target["targetId"], "flatten": true}),
        );
        b.session = Some(attached["sessionId"].as_str().unwrap().to_string());
        b
    }

    /// Sends a command and returns its result; events that arrive meanwhile are kept.
    fn call(&mut self, method: &str, params: Value) -> Value {
        self.next_id += 1;
        let id = self.next_id;
        let mut msg = json!({"id": id, "method": method, "params": params});
        if let Some(s) = &self.session {
            msg["sessionId"] = json!(s);
        }
        self.ws.send(Message::text(msg.to_string())).unwrap();
        let deadline = Instant::now() + TIMEOUT;
        while Instant::now() < deadline {
            let v = self.read();
            if v["id"] == json!(id) {
                assert!(v.get("error").is_none(), "{method}: {}", v["error"]);
                return v["result"].clone();
            }
            self.events.push(v);
        }
        panic!("{method}: no answer");
    }

    fn read(&mut self) -> Value {
        loop {
            match self.ws.read().expect("read from DevTools") {
                Message::Text(t) => return serde_json::from_str(t.as_str()).unwrap(),
                Message::Close(_) => panic!("DevTools closed the connection"),
                _ => {}
            }
        }
    }

    fn wait_for(&mut self, event: &str) {
        if self.events.iter().any(|e| e["method"] == event) {
            return;
        }
        let deadline = Instant::now() + TIMEOUT;
        while Instant::now() < deadline {
            let v = self.read();
            let hit = v["method"] == event;
            self.events.push(v);
            if hit {
                return;
            }
        }
        panic!("no {event}");
    }

    /// Console errors and warnings, uncaught exceptions, failed loads and dialogs.
    fn problems(&self) -> Vec<String> {
        self.events
            .iter()
            .filter(|e| match e["method"].as_str().unwrap_or("") {
                "Runtime.consoleAPICalled" => {
                    matches!(
                        e["params"]["type"].as_str(),
                        Some("error" | "warning" | "assert")
                    )
                }
                "Runtime.exceptionThrown" | "Page.javascriptDialogOpening" => true,
                "Log.entryAdded" => e["params"]["entry"]["level"] == "error",
                _ => false,
            })
            .map(|e| e.to_string())
            .collect()
    }

    /// Loads a page and waits for its load event.
    fn open(&mut self, file: &Path) {
        for domain in ["Page.enable", "Runtime.enable", "Log.enable"] {
            self.call(domain, json!({}));
        }
        self.call(
            "Emulation.setDeviceMetricsOverride",
            json!({"width": 1280, "height": 900, "deviceScaleFactor": 1, "mobile": false}),
        );
        let url = format!("file://{}", file.canonicalize().unwrap().display());
        self.events.clear();
        self.call("Page.navigate", json!({ "url": url }));
        self.wait_for("Page.loadEventFired");
    }

    fn evaluate(&mut self, expression: &str) -> Value {
        let r = self.call(
            "Runtime.evaluate",
            json!({"expression": expression, "returnByValue": true}),
        );
        r["result"]["value"].clone()
    }

    fn bytes(&mut self, method: &str, params: Value) -> Vec<u8> {
        let r = self.call(method, params);
        base64::engine::general_purpose::STANDARD
            .decode(r["data"].as_str().unwrap())
            .unwrap()
    }
}

impl Drop for Browser {
    fn drop(&mut self) {
        let _ = self.child.kill();
        let _ = self.child.wait();
    }
}

/// Pixels of a PNG as RGB triples.
fn rgb_pixels(png_bytes: &[u8]) -> (u32, u32, Vec<[u8; 3]>) {
    let decoder = png::Decoder::new(std::io::Cursor::new(png_bytes));
    let mut reader = decoder.read_info().unwrap();
    let mut buf = vec![0; reader.output_buffer_size()];
    let info = reader.next_frame(&mut buf).unwrap();
    let step = info.color_type.samples();
    assert!(step >= 3, "colour screenshot expected");
    let px = buf[..info.buffer_size()]
        .chunks(step)
        .map(|c| [c[0], c[1], c[2]])
        .collect();
    (info.width, info.height, px)
}

/// Share of pixels that are not (near) white, and how many distinct colours there are.
fn ink(pixels: &[[u8; 3]]) -> (f64, usize) {
    let inked = pixels.iter().filter(|p| p.iter().any(|&c| c < 235)).count();
    let mut colours: Vec<[u8; 3]> = pixels
        .iter()
        .map(|p| [p[0] >> 4, p[1] >> 4, p[2] >> 4])
        .collect();
    colours.sort();
    colours.dedup();
    (inked as f64 / pixels.len() as f64, colours.len())
}

fn keep(name: &str, bytes: &[u8]) {
    if let Some(dir) = std::env::var_os("CAPSTACK_SCREENSHOTS") {
        std::fs::create_dir_all(&dir).unwrap();
        std::fs::write(Path::new(&dir).join(name), bytes).unwrap();
    }
}

fn browser_or_skip() -> Option<PathBuf> {
    match find_chromium() {
        Some(p) => Some(p),
        None if std::env::var_os("CAPSTACK_REQUIRE_BROWSER").is_some() => {
            panic!("CAPSTACK_REQUIRE_BROWSER is set but no chromium was found (install Debian's chromium)")
        }
        None => {
            eprintln!("report_browser: no chromium on this machine; the browser check did not run");
            None
        }
    }
}

const LAYOUT: &str = r#"JSON.stringify({
  figures: [...document.querySelectorAll('figure.chart')].map(f => {
    const s = f.querySelector('svg');
    const r = s ? s.getBoundingClientRect() : {width: 0, height: 0};
    return { id: f.id, width: r.width, height: r.height,
             shapes: s ? s.querySelectorAll('path, rect, circle, polyline, line, polygon').length : 0,
             texts: s ? s.querySelectorAll('text').length : 0 };
  }),
  scripts: document.scripts.length,
  external: [...document.querySelectorAll('[src], link[href]')].length,
  sections: [...document.querySelectorAll('main > section')].map(s => s.id),
  firstChart: (() => { const s = document.querySelector('figure.chart svg');
                       if (!s) return null; s.scrollIntoView();
                       const r = s.getBoundingClientRect();
                       return { x: r.x + window.scrollX, y: r.y + window.scrollY, width: r.width, height: r.height }; })()
})"#;

#[test]
fn the_report_loads_cleanly_and_every_chart_renders_in_chromium() {
    let Some(chromium) = browser_or_skip() else {
        return;
    };
    let (dir, _) = common::demo_stack_file();
    let out = dir.path().join("report.html");
    let charts = dir.path().join("charts");
    let mut cmd = assert_cmd::Command::cargo_bin("capstack").unwrap();
    cmd.arg("report");
    for (data, specs) in [
        ("northfield_housing.csv", "northfield_specs.csv"),
        ("kestrel_bearings.csv", "kestrel_specs.csv"),
        ("orrin_spacers.tsv", "orrin_specs.csv"),
        ("talvik_hubs.csv", "talvik_specs.csv"),
    ] {
        cmd.arg(dir.path().join(data))
            .arg("--specs")
            .arg(dir.path().join(specs));
    }
    cmd.arg("--stack")
        .arg(dir.path().join("end_play.toml"))
        .args(["--samples", "200000", "-o"])
        .arg(&out)
        .arg("--charts")
        .arg(&charts)
        .assert()
        .success();
    let expected_charts = std::fs::read_dir(&charts)
        .unwrap()
        .filter(|e| {
            e.as_ref()
                .unwrap()
                .path()
                .extension()
                .is_some_and(|x| x == "svg")
        })
        .count();

    let mut b = Browser::launch(&chromium);
    b.open(&out);
    let layout: Value =
        serde_json::from_str(b.evaluate(LAYOUT).as_str().expect("layout as JSON")).unwrap();
    let problems = b.problems();
    assert!(problems.is_empty(), "the page logged: {problems:#?}");

    assert_eq!(layout["scripts"], 0);
    assert_eq!(layout["external"], 0);
    assert_eq!(
        layout["sections"],
        json!(["summary", "assembly", "features", "audit", "methods"])
    );
    let figures = layout["figures"].as_array().unwrap();
    assert_eq!(figures.len(), expected_charts);
    for f in figures {
        let (w, h) = (f["width"].as_f64().unwrap(), f["height"].as_f64().unwrap());
        assert!(
            w > 200.0 && h > 100.0,
            "chart {} laid out at {w}×{h}",
            f["id"]
        );
        assert!(
            f["shapes"].as_u64().unwrap() > 5,
            "chart {} is empty",
            f["id"]
        );
        assert!(
            f["texts"].as_u64().unwrap() > 3,
            "chart {} has no labels",
            f["id"]
        );
    }

    // The first screen: more than a blank page.
    let shot = b.bytes("Page.captureScreenshot", json!({"format": "png"}));
    keep("report-top.png", &shot);
    let (w, h, px) = rgb_pixels(&shot);
    assert_eq!((w, h), (1280, 900));
    let (inked, colours) = ink(&px);
    assert!(
        inked > 0.03 && colours > 20,
        "screenshot looks blank: {inked} inked, {colours} colours"
    );

    // The first chart, clipped: drawn content in the palette's colours.
    let r = &layout["firstChart"];
    let clip =
        json!({"x": r["x"], "y": r["y"], "width": r["width"], "height": r["height"], "scale": 1});
    let chart = b.bytes(
        "Page.captureScreenshot",
        json!({"format": "png", "clip": clip, "captureBeyondViewport": true}),
    );
    keep("report-first-chart.png", &chart);
    let (_, _, px) = rgb_pixels(&chart);
    let (inked, colours) = ink(&px);
    assert!(
        inked > 0.05 && colours > 8,
        "the first chart looks empty: {inked}, {colours}"
    );
    // The simulated histogram's bars are drawn in the data colour (70, 120, 170 light tint).
    let bluish = px.iter().filter(|p| p[2] > p[0] + 40 && p[2] > 150).count();
    assert!(bluish > px.len() / 50, "no bars in the assembly chart");

    // Printing: a PDF of several A4 pages (each section starts a page).
    let pdf = b.bytes(
        "Page.printToPDF",
        json!({"printBackground": true, "preferCSSPageSize": true}),
    );
    keep("report.pdf", &pdf);
    assert!(pdf.starts_with(b"%PDF-"));
    let text = String::from_utf8_lossy(&pdf);
    let pages = text.matches("/Type /Page").count() - text.matches("/Type /Pages").count();
    assert!(pages >= 8, "{pages} pages");
    assert!(b.problems().is_empty(), "{:#?}", b.problems());
}

#[test]
fn hostile_names_stay_text_in_the_browser() {
    let Some(chromium) = browser_or_skip() else {
        return;
    };
    let mut csv = String::from("part,<img src=x onerror=alert(1)>,lot\n");
    for i in 0..25 {
        csv.push_str(&format!(
            "P{i},{},<script>alert(2)</script>\n",
            5.0 + 0.001 * ((i * 13) % 17) as f64
        ));
    }
    let dir = common::dir_with(&[("hostile.csv", &csv)]);
    let out = dir.path().join("hostile.html");
    assert_cmd::Command::cargo_bin("capstack")
        .unwrap()
        .arg("report")
        .arg(dir.path().join("hostile.csv"))
        .args(["--by", "lot", "-o"])
        .arg(&out)
        .assert()
        .success();
    let mut b = Browser::launch(&chromium);
    b.open(&out);
    let found = b.evaluate(
        "JSON.stringify({ scripts: document.scripts.length, images: document.images.length, \
         shown: document.body.innerText.includes('<img src=x onerror=alert(1)>') })",
    );
    let found: Value = serde_json::from_str(found.as_str().unwrap()).unwrap();
    assert_eq!(found, json!({"scripts": 0, "images": 0, "shown": true}));
    assert!(b.problems().is_empty(), "{:#?}", b.problems());
}

#[test]
fn the_browser_check_sees_console_errors_and_failed_loads() {
    // The checker itself: a page that logs an error and fetches from the network must fail it.
    let Some(chromium) = browser_or_skip() else {
        return;
    };
    let dir = common::dir_with(&[(
        "broken.html",
        "<!DOCTYPE html><html><body><p>x</p><img src=\"missing-image.png\">\
         <script>console.error('broken on purpose')</script></body></html>",
    )]);
    let mut b = Browser::launch(&chromium);
    b.open(&dir.path().join("broken.html"));
    let problems = b.problems().join("\n");
    assert!(problems.contains("broken on purpose"), "{problems}");
    assert!(problems.contains("missing-image.png"), "{problems}");
}
