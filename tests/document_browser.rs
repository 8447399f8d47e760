//! The weekly document in a real browser: headless Chromium opens the demo's HTML with the network
//! unplugged, at a phone's width, and we read the rendered page back over the DevTools protocol.
//!
//! Chromium speaks the protocol over a pipe (`--remote-debugging-pipe`: commands on its fd 3,
//! replies on its fd 4, each message ending in a NUL byte), so no WebSocket client is needed. A
//! shell maps the child's stdin and stdout onto those descriptors.
//!
//! `.ci/run` installs Debian's `chromium` when it is absent; where no Chromium can be found the
//! test says so on stderr and passes without checking (set RUNCAL_CHROMIUM to a binary to use it).

#![allow(clippy::unwrap_used, clippy::expect_used)] // test code: a failed unwrap is a failed test

mod common;

use std::io::{BufRead, BufReader, Write};
use std::path::{Path, PathBuf};
use std::process::{Child, ChildStdin, Command, Stdio};
use std::sync::mpsc::{Receiver, RecvTimeoutError, channel};
use std::time::{Duration, Instant};

use serde_json::{Value, json};

const WIDTH: u64 = 390;

fn chromium() -> Option<PathBuf> {
    if let Ok(p) = std::env::var("RUNCAL_CHROMIUM") {
        return Some(PathBuf::from(p));
    }
    ["chromium", "chromium-browser", "google-chrome"]
        .iter()
        .find_map(|name| {
            let out = Command::new("sh")
                .args(["-c", &format!("command -v {name}")])
                .output()
                .ok()?;
            out.status
                .success()
                .then(|| PathBuf::from(String::from_utf8_lossy(&out.stdout).trim()))
        })
}

/// Whether this process may start programs in a fresh network namespace (no interfaces but a
/// loopback that is down): then nothing can leave the machine whatever the page asks.
fn can_unplug() -> bool {
    Command::new("unshare")
        .args(["-n", "true"])
        .stderr(Stdio::null())
        .status()
        .is_ok_and(|s| s.success())
}

struct Browser {
    child: Child,
    stdin: ChildStdin,
    replies: Receiver<Value>,
    next_id: u64,
    /// Every event the browser sent, in order: the request log.
    events: Vec<Value>,
}

impl Browser {
    fn launch(binary: &Path, profile_dir: &Path, stderr_log: &Path, unplugged: bool) -> Browser {
        let mut argv: Vec<String> = Vec::new();
        if unplugged {
            argv.extend(["unshare".into(), "-n".into()]);
        }
        argv.push(binary.display().to_string());
        argv.extend(
            [
                "--headless",
                "--no-sandbox",
                "--disable-gpu",
                "--remote-debugging-pipe",
                "--no-first-run",
                "--no-default-browser-check",
                "--disable-background-networking",
                "--disable-component-update",
                "--disable-default-apps",
                "--disable-extensions",
                "--disable-sync",
                "--disable-domain-reliability",
                "--disable-client-side-phishing-detection",
                "--metrics-recording-only",
                "--disable-features=Translate,MediaRouter,OptimizationHints,AutofillServerCommunication",
                // Belt and braces where no namespace could be made: any request goes nowhere.
                "--proxy-server=127.0.0.1:9",
                "--hide-scrollbars",
            ]
            .map(String::from),
        );
        argv.push(format!("--user-data-dir={}", profile_dir.display()));
        argv.push("about:blank".into());
        let mut child = Command::new("sh")
            .arg("-c")
            .arg(r#"exec "$@" 3<&0 4>&1 0</dev/null 1>/dev/null"#)
            .arg("sh")
            .args(&argv)
            .stdin(Stdio::piped())
            .stdout(Stdio::piped())
            .stderr(std::fs::File::create(stderr_log).unwrap())
            .spawn()
            .expect("start chromium");
        let stdin = child.stdin.take().unwrap();
        let stdout = child.stdout.take().unwrap();
        let (tx, replies) = channel();
        std::thread::spawn(move || {
            let mut r = BufReader::new(stdout);
            loop {
                let mut buf = Vec::new();
                match r.read_until(0, &mut buf) {
                    Ok(0) | Err(_) => return,
                    Ok(_) => {
                        buf.pop();
                        if let Ok(v) = serde_json::from_slice::<Value>(&buf)
                            && tx.send(v).is_err()
                        {
                            return;
                        }
                    }
                }
            }
        });
        Browser {
            child,
            stdin,
            replies,
            next_id: 0,
            events: Vec::new(),
        }
    }

    fn wait(&mut self, until: impl Fn(&Value) -> bool, what: &str) -> Value {
        let deadline = Instant::now() + Duration::from_secs(60);
        loop {
            let left = deadline.saturating_duration_since(Instant::now());
            match self.replies.recv_timeout(left) {
                Ok(v) => {
                    let hit = until(&v);
                    if v.get("method").is_some() {
                        self.events.push(v.clone());
                    }
                    if hit {
                        return v;
                    }
                }
                Err(RecvTimeoutError::Timeout) => panic!("chromium: no {what} within 60 s"),
                Err(RecvTimeoutError::Disconnected) => {
                    panic!("chromium closed the pipe before {what}")
                }
            }
        }
    }

    fn call(&mut self, session: Option<&str>, method: &str, params: Value) -> Value {
        self.next_id += 1;
        let id = self.next_id;
        let mut msg = json!({"id": id, "method": method, "params": params});
        if let Some(s) = session {
            msg["sessionId"] = json!(s);
        }
        let mut bytes = serde_json::to_vec(&msg).unwrap();
        bytes.push(0);
        self.stdin.write_all(&bytes).unwrap();
        self.stdin.flush().unwrap();
        let reply = self.wait(|v| v["id"] == json!(id), method);
        assert!(reply.get("error").is_none(), "{method} failed: {reply}");
        reply["result"].clone()
    }

    fn evaluate(&mut self, session: &str, expression: &str) -> Value {
        let r = self.call(
            Some(session),
            "Runtime.evaluate",
            json!({"expression": expression, "returnByValue": true}),
        );
        r["result"]["value"].clone()
    }
}

impl Drop for Browser {
    fn drop(&mut self) {
        let _ = self.child.kill();
        let _ = self.child.wait();
    }
}

/// The clubs of a game log, from its home and away columns.
fn clubs_of(path: &Path) -> Vec<String> {
    let mut r = csv::Reader::from_path(path).unwrap();
    let headers = r.headers().unwrap().clone();
    let col = |name: &str| headers.iter().position(|h| h == name).unwrap();
    let (home, away) = (col("home"), col("away"));
    let mut clubs: Vec<String> = r
        .records()
        .flat_map(|rec| {
            let rec = rec.unwrap();
            [rec[home].to_string(), rec[away].to_string()]
        })
        .collect();
    clubs.sort();
    clubs.dedup();
    clubs
}

/// Screenshots are for a person to look at (under target/, never committed).
fn save_png(path: &Path, data: &Value) {
    use base64::Engine;
    let bytes = base64::engine::general_purpose::STANDARD
        .decode(data.as_str().expect("screenshot data"))
        .expect("base64 screenshot");
    assert!(bytes.starts_with(b"\x89PNG"), "not a PNG");
    std::fs::write(path, bytes).unwrap();
}

#[test]
fn demo_document_renders_on_a_phone_with_nothing_fetched() {
    let Some(binary) = chromium() else {
        eprintln!(
            "SKIPPED document_browser: no Chromium found (apt-get install -y chromium, or set RUNCAL_CHROMIUM)"
        );
        return;
    };
    let repo = common::repo();
    let out = repo.join("target/document-browser");
    std::fs::create_dir_all(&out).unwrap();
    let page = out.join("meridian-week.html");
    common::runcal()
        .args([
            "digest",
            "demo-data/meridian-2026-games.csv",
            "--profile",
            "demo-data/meridian-profile.json",
            "--as-of",
            "2026-07-15",
            "--output",
        ])
        .arg(&page)
        .assert()
        .success();

    let user_dir = tempfile::tempdir().unwrap();
    let log = out.join("chromium-stderr.log");
    let unplugged = can_unplug();
    let mut b = Browser::launch(&binary, user_dir.path(), &log, unplugged);
    let target = b.call(None, "Target.createTarget", json!({"url": "about:blank"}));
    let attached = b.call(
        None,
        "Target.attachToTarget",
        json!({"targetId": target["targetId"], "flatten": true}),
    );
    let session = attached["sessionId"].as_str().unwrap().to_string();
    let s = Some(session.as_str());
    b.call(s, "Network.enable", json!({}));
    b.call(s, "Page.enable", json!({}));
    b.call(
        s,
        "Emulation.setDeviceMetricsOverride",
        json!({"width": WIDTH, "height": 844, "deviceScaleFactor": 2, "mobile": true}),
    );
    let url = format!("file://{}", page.display());
    b.call(s, "Page.navigate", json!({"url": url}));
    b.wait(|v| v["method"] == "Page.loadEventFired", "page load");

    let facts = b.evaluate(
        &session,
        r#"JSON.stringify({
            scrollWidth: document.documentElement.scrollWidth,
            clientWidth: document.documentElement.clientWidth,
            bodyScrollWidth: document.body.scrollWidth,
            innerWidth: window.innerWidth,
            luckClubs: Array.from(document.querySelectorAll('#luck-table tbody th')).map(t => t.textContent),
            caution: (document.querySelector('.caution') || {}).textContent || '',
            scripts: document.scripts.length,
            svgs: document.querySelectorAll('figure svg').length,
            wideBoxes: Array.from(document.querySelectorAll('main > *')).filter(e => e.getBoundingClientRect().right > window.innerWidth + 0.5).map(e => e.tagName + '.' + e.className)
        })"#,
    );
    let facts: Value = serde_json::from_str(facts.as_str().unwrap()).unwrap();
    let dom = b.evaluate(&session, "document.documentElement.outerHTML");
    std::fs::write(out.join("meridian-week.dom.html"), dom.as_str().unwrap()).unwrap();

    let shot = b.call(s, "Page.captureScreenshot", json!({"format": "png"}));
    save_png(&out.join("meridian-week-top.png"), &shot["data"]);
    let metrics = b.call(s, "Page.getLayoutMetrics", json!({}));
    let height = metrics["cssContentSize"]["height"]
        .as_f64()
        .unwrap_or(4000.0);
    let full = b.call(
        s,
        "Page.captureScreenshot",
        json!({"format": "png", "captureBeyondViewport": true,
               "clip": {"x": 0, "y": 0, "width": WIDTH, "height": height, "scale": 1}}),
    );
    save_png(&out.join("meridian-week-full.png"), &full["data"]);
    // Paper: the print stylesheet asks for A4 across; on its text width (29.7 cm less 2 × 1 cm
    // margins, at 96 CSS pixels per inch: 1047 px) nothing runs past the edge.
    b.call(s, "Emulation.setEmulatedMedia", json!({"media": "print"}));
    b.call(
        s,
        "Emulation.setDeviceMetricsOverride",
        json!({"width": 1047, "height": 1000, "deviceScaleFactor": 1, "mobile": false}),
    );
    let printed = b.evaluate(
        &session,
        "JSON.stringify([document.documentElement.scrollWidth, document.documentElement.clientWidth])",
    );
    let printed: Vec<u64> = serde_json::from_str(printed.as_str().unwrap()).unwrap();
    let paper = b.call(
        s,
        "Page.captureScreenshot",
        json!({"format": "png", "captureBeyondViewport": true,
               "clip": {"x": 0, "y": 0, "width": 1047, "height": 2400, "scale": 1}}),
    );
    save_png(&out.join("meridian-week-print.png"), &paper["data"]);
    let pdf = b.call(s, "Page.printToPDF", json!({"preferCSSPageSize": true}));
    assert!(
        pdf["data"].as_str().is_some_and(|d| d.len() > 1000),
        "printing failed"
    );

    assert_eq!(
        printed[0], printed[1],
        "printed page runs past the paper's edge: {printed:?}"
    );
    // The page is laid out at the phone's width, and nothing in it is wider than the screen.
    assert_eq!(facts["innerWidth"], json!(WIDTH), "{facts}");
    assert_eq!(
        facts["scrollWidth"], facts["clientWidth"],
        "page scrolls sideways: {facts}"
    );
    assert_eq!(facts["wideBoxes"], json!([]), "{facts}");
    // Every club of the game log appears exactly once in the luck table.
    let mut shown: Vec<String> = facts["luckClubs"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_str().unwrap().to_string())
        .collect();
    shown.sort();
    assert_eq!(
        shown,
        clubs_of(&repo.join("demo-data/meridian-2026-games.csv"))
    );
    assert!(
        facts["caution"].as_str().unwrap().contains(runcal::CAUTION),
        "{facts}"
    );
    assert_eq!(facts["scripts"], json!(0));
    assert_eq!(facts["svgs"], json!(2));

    // The request log: the document itself is the only thing loaded.
    let requests: Vec<String> = b
        .events
        .iter()
        .filter(|e| e["method"] == "Network.requestWillBeSent")
        .map(|e| {
            e["params"]["request"]["url"]
                .as_str()
                .unwrap_or("")
                .to_string()
        })
        .collect();
    assert_eq!(requests, vec![url.clone()], "requests: {requests:?}");
    let failed: Vec<&Value> = b
        .events
        .iter()
        .filter(|e| e["method"] == "Network.loadingFailed")
        .collect();
    assert!(failed.is_empty(), "{failed:?}");
    let _ = b.call(None, "Browser.close", json!({}));
    eprintln!(
        "document_browser: {} requests, network {}; screenshot and DOM in {}",
        requests.len(),
        if unplugged {
            "unplugged (unshare -n)"
        } else {
            "behind a dead proxy"
        },
        out.display()
    );
}
