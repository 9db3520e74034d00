//! The report in a real browser: headless Chromium opens the demo's report
//! from a file, and the test checks through the DevTools protocol that the
//! page logged no console message, threw nothing, fetched nothing from the
//! network, has its topic cards and map in the rendered DOM, and that the
//! document browser filters; it saves a full-page screenshot under
//! `target/report-screenshots/` for people to look at. A hostile document's
//! text must stay text there too.
//!
//! Chromium must be installed (Debian's `chromium`; `.ci/run` installs it).
//! Without it the test fails and says so: a browser test that passes without
//! a browser would prove nothing.

use std::io::{BufRead, BufReader};
use std::net::TcpStream;
use std::path::{Path, PathBuf};
use std::process::{Child, Command, Stdio};
use std::time::{Duration, Instant};

use base64::Engine;
use serde_json::{Value, json};
use tungstenite::stream::MaybeTlsStream;
use tungstenite::{Message, WebSocket};

use crate::util::{Scratch, themata};

/// The flags the browser runs with (the list), plus the DevTools port.
const FLAGS: [&str; 8] = [
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--no-first-run",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--remote-debugging-port=0",
];

/// How long any one step may take before the test gives up.
const STEP: Duration = Duration::from_secs(90);

/// The Chromium binary on the PATH.
fn chromium() -> PathBuf {
    let path = std::env::var_os("PATH").unwrap_or_default();
    for folder in std::env::split_paths(&path) {
        for name in ["chromium", "chromium-browser"] {
            let candidate = folder.join(name);
            if candidate.is_file() {
                return candidate;
            }
        }
    }
    panic!(
        "Chromium is not installed, so the report cannot be checked in a browser: install Debian's \
         chromium (apt-get install -y chromium; .ci/run does this) and run the test again"
    );
}

/// A running headless Chromium, ended when dropped.
struct Browser {
    child: Child,
}

impl Drop for Browser {
    fn drop(&mut self) {
        let _ = self.child.kill();
        let _ = self.child.wait();
    }
}

/// A DevTools protocol connection attached to one page.
struct DevTools {
    socket: WebSocket<MaybeTlsStream<TcpStream>>,
    next_id: u64,
    session: Option<String>,
    /// Events received so far, oldest first.
    events: Vec<Value>,
}

impl DevTools {
    fn send(&mut self, method: &str, params: Value) -> u64 {
        self.next_id += 1;
        let mut message = json!({ "id": self.next_id, "method": method, "params": params });
        if let Some(session) = &self.session {
            message["sessionId"] = json!(session);
        }
        self.socket
            .send(Message::Text(message.to_string().into()))
            .unwrap();
        self.next_id
    }

    fn receive(&mut self) -> Value {
        loop {
            match self
                .socket
                .read()
                .expect("a DevTools message before the time-out")
            {
                Message::Text(text) => return serde_json::from_str(text.as_str()).unwrap(),
                Message::Close(_) => panic!("the browser closed the DevTools connection"),
                _ => {}
            }
        }
    }

    /// Calls a method and returns its result (events met on the way are kept).
    fn call(&mut self, method: &str, params: Value) -> Value {
        let id = self.send(method, params);
        let deadline = Instant::now() + STEP;
        while Instant::now() < deadline {
            let message = self.receive();
            if message["id"] == id {
                assert!(message.get("error").is_none(), "{method}: {message}");
                return message["result"].clone();
            }
            self.events.push(message);
        }
        panic!("{method}: no answer within {STEP:?}");
    }

    /// Waits for an event of this page.
    fn wait_for(&mut self, method: &str) {
        let deadline = Instant::now() + STEP;
        let seen = |events: &[Value]| events.iter().any(|event| event["method"] == method);
        while !seen(&self.events) {
            assert!(Instant::now() < deadline, "no {method} within {STEP:?}");
            let message = self.receive();
            self.events.push(message);
        }
    }

    /// Evaluates a JavaScript expression in the page and returns its value.
    fn evaluate(&mut self, expression: &str) -> Value {
        let result = self.call(
            "Runtime.evaluate",
            json!({ "expression": expression, "returnByValue": true, "awaitPromise": true }),
        );
        assert!(result.get("exceptionDetails").is_none(), "{expression}: {result}");
        result["result"]["value"].clone()
    }

    /// Opens `url` and waits until it has loaded; clears the events first.
    fn open(&mut self, url: &str) {
        self.events.clear();
        self.call("Page.navigate", json!({ "url": url }));
        self.wait_for("Page.loadEventFired");
        // Let the page's script run its first drawing and any late message arrive.
        self.evaluate("new Promise(resolve => setTimeout(() => resolve(true), 300))");
    }

    /// Console messages, uncaught exceptions, error log entries, dialogs
    /// and network requests (other than the file itself) since the last
    /// `open`.
    fn complaints(&self, own_url: &str) -> Vec<String> {
        let mut complaints = Vec::new();
        for event in &self.events {
            let params = &event["params"];
            match event["method"].as_str().unwrap_or("") {
                "Runtime.consoleAPICalled" => {
                    complaints.push(format!("console.{}: {}", params["type"], params["args"]))
                }
                "Runtime.exceptionThrown" => {
                    complaints.push(format!("exception: {}", params["exceptionDetails"]))
                }
                "Log.entryAdded" if params["entry"]["level"] == "error" => {
                    complaints.push(format!("log: {}", params["entry"]["text"]))
                }
                "Page.javascriptDialogOpening" => complaints.push(format!("dialog: {}", params["message"])),
                "Network.requestWillBeSent" => {
                    let url = params["request"]["url"].as_str().unwrap_or("");
                    if url != own_url && !url.starts_with("data:") && !url.starts_with("about:") {
                        complaints.push(format!("request: {url}"));
                    }
                }
                _ => {}
            }
        }
        complaints
    }
}

/// Starts Chromium with a fresh profile in `profile` and attaches to a new page.
fn start(profile: &Path) -> (Browser, DevTools) {
    let mut child = Command::new(chromium())
        .args(FLAGS)
        .arg(format!("--user-data-dir={}", profile.display()))
        .arg("about:blank")
        .stdin(Stdio::null())
        .stdout(Stdio::null())
        .stderr(Stdio::piped())
        .spawn()
        .expect("Chromium starts");
    // Chromium prints "DevTools listening on ws://..." on stderr.
    let stderr = child.stderr.take().unwrap();
    let (sender, receiver) = std::sync::mpsc::channel();
    std::thread::spawn(move || {
        for line in BufReader::new(stderr).lines().map_while(Result::ok) {
            if let Some(at) = line.find("ws://") {
                let _ = sender.send(line[at..].trim().to_string());
            }
        }
    });
    let browser = Browser { child };
    let url = receiver
        .recv_timeout(STEP)
        .expect("Chromium announces its DevTools address");
    let (socket, _) = tungstenite::connect(url.as_str()).expect("the DevTools connection opens");
    if let MaybeTlsStream::Plain(stream) = socket.get_ref() {
        stream.set_read_timeout(Some(STEP)).unwrap();
    }
    let mut tools = DevTools {
        socket,
        next_id: 0,
        session: None,
        events: Vec::new(),
    };
    let target = tools.call("Target.createTarget", json!({ "url": "about:blank" }));
    let attached = tools.call(
        "Target.attachToTarget",
        json!({ "targetId": target["targetId"], "flatten": true }),
    );
    tools.session = Some(attached["sessionId"].as_str().unwrap().to_string());
    for domain in ["Page.enable", "Runtime.enable", "Log.enable", "Network.enable"] {
        tools.call(domain, json!({}));
    }
    tools.call(
        "Emulation.setDeviceMetricsOverride",
        json!({ "width": 1280, "height": 900, "deviceScaleFactor": 1, "mobile": false }),
    );
    (browser, tools)
}

fn file_url(path: &Path) -> String {
    format!("file://{}", std::fs::canonicalize(path).unwrap().display())
}

#[test]
fn the_demo_report_renders_in_headless_chromium_without_errors() {
    // Source: Chrome DevTools Protocol (Runtime.consoleAPICalled,
    // Runtime.exceptionThrown, Log.entryAdded, Network.requestWillBeSent,
    // Page.captureScreenshot with captureBeyondViewport); the demo corpus
    // has 100 issues of 5 items and 10 themes (corpora-demo/README.md).
    let scratch = Scratch::new();
    let repo = Path::new(env!("CARGO_MANIFEST_DIR"));
    let demo = scratch.path("demo");
    themata(repo)
        .args(["run", "configs/demo.toml", "--quiet", "--out"])
        .arg(&demo)
        .assert()
        .success();
    let (_browser, mut tools) = start(&scratch.path("profile"));

    // The harness itself: a page that logs an error is caught.
    tools.open("data:text/html,%3Cp%3Ex%3C/p%3E%3Cscript%3Econsole.error('planted')%3C/script%3E");
    let planted = tools.complaints("");
    assert!(planted.iter().any(|c| c.contains("planted")), "{planted:?}");

    let url = file_url(&demo.join("report.html"));
    tools.open(&url);
    let complaints = tools.complaints(&url);
    assert!(complaints.is_empty(), "the page complained: {complaints:?}");
    let found = tools.evaluate(
        "({ cards: document.querySelectorAll('article.card').length, \
            map: document.querySelectorAll('svg#topic-map a.map-topic circle').length, \
            charts: document.querySelectorAll('figure svg').length, \
            rows: document.querySelectorAll('#browser-rows tr').length, \
            status: document.getElementById('browser-status').textContent, \
            height: document.documentElement.scrollHeight })",
    );
    assert_eq!(found["cards"], 10, "{found}");
    assert_eq!(found["map"], 10, "{found}");
    assert!(found["charts"].as_u64().unwrap() >= 4, "{found}");
    assert_eq!(found["rows"], 50, "{found}");
    assert!(found["status"].as_str().unwrap().contains("of 500"), "{found}");
    // The browser filters: issue 1 has five items.
    let filtered = tools.evaluate(
        "(() => { const box = document.getElementById('filter-id'); box.value = 'issue-001/'; \
          box.dispatchEvent(new Event('input')); \
          return document.querySelectorAll('#browser-rows tr').length; })()",
    );
    assert_eq!(filtered, 5);
    // A map circle leads to its card.
    let target = tools.evaluate(
        "(() => { const link = document.querySelector('svg#topic-map a.map-topic'); \
          return document.querySelector(link.getAttribute('href')) !== null; })()",
    );
    assert_eq!(target, true);
    assert!(tools.complaints(&url).is_empty(), "{:?}", tools.complaints(&url));

    // A full-page screenshot for people to look at.
    tools.evaluate(
        "(() => { const box = document.getElementById('filter-id'); box.value = ''; \
          box.dispatchEvent(new Event('input')); window.scrollTo(0, 0); return true; })()",
    );
    let metrics = tools.call("Page.getLayoutMetrics", json!({}));
    let height = metrics["cssContentSize"]["height"].as_f64().unwrap().ceil();
    let shot = tools.call(
        "Page.captureScreenshot",
        json!({ "format": "png", "captureBeyondViewport": true,
                "clip": { "x": 0, "y": 0, "width": 1280, "height": height, "scale": 1 } }),
    );
    let png = base64::engine::general_purpose::STANDARD
        .decode(shot["data"].as_str().unwrap())
        .unwrap();
    // Source: PNG specification (ISO/IEC 15948) section 5.2, the signature.
    assert!(png.starts_with(b"\x89PNG\r\n\x1a\n"));
    let folder = repo.join("target/report-screenshots");
    std::fs::create_dir_all(&folder).unwrap();
    std::fs::write(folder.join("demo-report.png"), &png).unwrap();
}

#[test]
fn hostile_document_text_stays_text_in_the_browser() {
    // Source: HTML Living Standard section 13.1.2.6 and Chrome DevTools
    // Protocol (Page.javascriptDialogOpening): an id holding markup must
    // show as its characters, create no element and run no script.
    let scratch = Scratch::new();
    let mut documents = crate::report::small_documents();
    let hostile = "</script><img src=x onerror=alert(1)>";
    documents[0]["id"] = json!(hostile);
    documents[0]["theme"] = json!("<b onmouseover=alert(2)>label</b>");
    documents[0]["text"] = json!(format!(
        "<script>alert(3)</script> {}",
        documents[0]["text"].as_str().unwrap()
    ));
    let model = crate::report::run_small(&scratch, &documents);
    let (_browser, mut tools) = start(&scratch.path("profile"));
    let url = file_url(&model.join("report.html"));
    tools.open(&url);
    assert!(tools.complaints(&url).is_empty(), "{:?}", tools.complaints(&url));
    let found = tools.evaluate(
        "({ images: document.querySelectorAll('img').length, \
            bold: document.querySelectorAll('b').length, \
            first: document.querySelector('#browser-rows tr td').textContent, \
            cards: document.querySelectorAll('article.card').length })",
    );
    assert_eq!(found["images"], 0, "{found}");
    assert_eq!(found["bold"], 0, "{found}");
    assert_eq!(found["first"], hostile, "{found}");
    assert_eq!(found["cards"], 3, "{found}");
}
