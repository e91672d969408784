//! `relyard serve` at the HTTP level: the real binary started on a free port, spoken to
//! over plain TCP (one request per connection), stopped with SIGINT.

use super::common::{chromium, demo_file, relyard, rendered_dom, scratch, write_file};
use std::io::{BufRead, BufReader, Read, Write};
use std::net::TcpStream;
use std::process::{Child, ChildStdout, Command, Stdio};
use std::time::Duration;

/// A running server: its process, port and launch token.
struct Server {
    child: Child,
    stdout: BufReader<ChildStdout>,
    port: u16,
    token: String,
}

impl Server {
    fn start(extra: &[&str]) -> Server {
        let mut child = Command::new(env!("CARGO_BIN_EXE_relyard"))
            .arg("serve")
            .args(extra)
            .stdout(Stdio::piped())
            .stderr(Stdio::null())
            .spawn()
            .expect("the server starts");
        let mut stdout = BufReader::new(child.stdout.take().expect("stdout"));
        let mut line = String::new();
        stdout.read_line(&mut line).expect("the address line");
        let url = line
            .split_whitespace()
            .find(|w| w.starts_with("http://127.0.0.1:"))
            .unwrap_or_else(|| panic!("no address in {line:?}"))
            .to_string();
        let rest = url.trim_start_matches("http://127.0.0.1:");
        let (port, query) = rest.split_once('/').expect("a path");
        let token = query.split_once("token=").expect("a token").1.to_string();
        Server {
            child,
            stdout,
            port: port.parse().expect("a port"),
            token,
        }
    }

    fn host(&self) -> String {
        format!("127.0.0.1:{}", self.port)
    }

    fn cookie(&self) -> String {
        format!("relyard_session={}", self.token)
    }

    /// Send one request; the status, the headers (lower-cased names) and the body.
    fn send(&self, method: &str, path: &str, headers: &[(&str, &str)], body: &[u8]) -> Reply {
        let mut s = TcpStream::connect(("127.0.0.1", self.port)).expect("connect");
        s.set_read_timeout(Some(Duration::from_secs(60))).unwrap();
        let mut head = format!("{method} {path} HTTP/1.1\r\nConnection: close\r\n");
        if !headers.iter().any(|(k, _)| k.eq_ignore_ascii_case("host")) {
            head.push_str(&format!("Host: {}\r\n", self.host()));
        }
        for (k, v) in headers {
            head.push_str(&format!("{k}: {v}\r\n"));
        }
        head.push_str(&format!("Content-Length: {}\r\n\r\n", body.len()));
        s.write_all(head.as_bytes()).unwrap();
        // A refused upload may close the connection before all of it is sent.
        let _ = s.write_all(body);
        read_reply(&mut s)
    }

    fn get(&self, path: &str) -> Reply {
        self.send("GET", path, &[("Cookie", &self.cookie())], b"")
    }

    fn post(&self, path: &str, body: &[u8]) -> Reply {
        let origin = format!("http://{}", self.host());
        self.send(
            "POST",
            path,
            &[("Cookie", &self.cookie()), ("Origin", &origin)],
            body,
        )
    }

    /// Stop with SIGINT (as Ctrl-C does) and return what it printed after the address.
    fn interrupt(mut self) -> (bool, String) {
        let pid = self.child.id().to_string();
        let sent = Command::new("kill").args(["-INT", &pid]).status();
        assert!(sent.is_ok_and(|s| s.success()), "kill -INT");
        let status = self.child.wait().expect("the server ends");
        let mut rest = String::new();
        let _ = self.stdout.read_to_string(&mut rest);
        (status.success(), rest)
    }
}

impl Drop for Server {
    fn drop(&mut self) {
        let _ = self.child.kill();
        let _ = self.child.wait();
    }
}

struct Reply {
    status: u16,
    headers: Vec<(String, String)>,
    body: Vec<u8>,
}

impl Reply {
    fn parse(raw: &[u8]) -> Reply {
        let split = raw
            .windows(4)
            .position(|w| w == b"\r\n\r\n")
            .unwrap_or_else(|| panic!("no header end in {:?}", String::from_utf8_lossy(raw)));
        let head = String::from_utf8_lossy(&raw[..split]).into_owned();
        let mut lines = head.lines();
        let status = lines
            .next()
            .and_then(|l| l.split_whitespace().nth(1))
            .and_then(|c| c.parse().ok())
            .expect("a status line");
        let headers: Vec<(String, String)> = lines
            .filter_map(|l| l.split_once(':'))
            .map(|(k, v)| (k.trim().to_ascii_lowercase(), v.trim().to_string()))
            .collect();
        let mut body = raw[split + 4..].to_vec();
        if headers
            .iter()
            .any(|(k, v)| k == "transfer-encoding" && v.contains("chunked"))
        {
            body = unchunk(&body);
        }
        Reply {
            status,
            headers,
            body,
        }
    }

    fn header(&self, name: &str) -> Option<&str> {
        self.headers
            .iter()
            .find(|(k, _)| k == name)
            .map(|(_, v)| v.as_str())
    }

    fn text(&self) -> String {
        String::from_utf8_lossy(&self.body).into_owned()
    }

    fn json(&self) -> serde_json::Value {
        serde_json::from_slice(&self.body).unwrap_or_else(|e| panic!("{e}: {}", self.text()))
    }
}

fn unchunk(mut b: &[u8]) -> Vec<u8> {
    let mut out = Vec::new();
    loop {
        let Some(end) = b.windows(2).position(|w| w == b"\r\n") else {
            return out;
        };
        let size =
            usize::from_str_radix(String::from_utf8_lossy(&b[..end]).trim(), 16).unwrap_or(0);
        if size == 0 {
            return out;
        }
        out.extend_from_slice(&b[end + 2..end + 2 + size]);
        b = &b[end + 4 + size..];
    }
}

#[test]
fn the_token_address_sets_the_session_and_nothing_is_served_without_it() {
    let s = Server::start(&[]);
    let open = s.send("GET", &format!("/open?token={}", s.token), &[], b"");
    assert_eq!(open.status, 303);
    let cookie = open.header("set-cookie").expect("a cookie");
    assert!(cookie.contains(&s.token) && cookie.contains("HttpOnly"));
    assert!(cookie.contains("SameSite=Strict"));
    let wrong = s.send("GET", "/open?token=0123", &[], b"");
    assert_eq!(wrong.status, 403);
    for path in ["/", "/app.js", "/app.css", "/api/start"] {
        assert_eq!(
            s.send("GET", path, &[], b"").status,
            403,
            "{path} without token"
        );
        let bad = s.send("GET", path, &[("Cookie", "relyard_session=00")], b"");
        assert_eq!(bad.status, 403, "{path} with a wrong token");
        let ok = s.get(path);
        assert_eq!(ok.status, 200, "{path} with the token");
        assert!(ok.header("content-security-policy").is_some());
    }
    let page = s.get("/").text();
    assert!(page.contains("<script src=\"/app.js\""));
    assert!(
        !page.contains("http://") && !page.contains("https://"),
        "nothing from elsewhere"
    );
    for path in [
        "/api/pool?demo=1",
        "/api/check?demo=1&coef=0.8&n=100",
        "/api/explain?demo=1&moderator=year",
        "/api/items?demo=1",
        "/api/icc?demo=1",
        "/api/correct?r=0.3&n=100&rel_x=0.8&rel_y=0.8",
        "/api/correct-with-benchmark?demo=1&r=0.3&n=100&rel_y=0.8",
        "/api/correct-regression?demo=1&outcome=engagement&predictor=candor&rel=candor=0.8",
        "/api/report?demo=1",
        "/api/report-command?demo=1",
        "/api/stop?job=x",
    ] {
        assert_eq!(
            s.send("POST", path, &[], b"").status,
            403,
            "{path} without the token"
        );
    }
    assert_eq!(s.send("GET", "/api/progress?job=x", &[], b"").status, 403);
}

#[test]
fn foreign_hosts_origins_and_cross_site_requests_are_refused() {
    let s = Server::start(&[]);
    let cookie = s.cookie();
    let foreign_host = s.send(
        "GET",
        "/",
        &[
            ("Host", &format!("rebound.example:{}", s.port)),
            ("Cookie", &cookie),
        ],
        b"",
    );
    assert_eq!(foreign_host.status, 403);
    let local_name = s.send(
        "GET",
        "/",
        &[
            ("Host", &format!("localhost:{}", s.port)),
            ("Cookie", &cookie),
        ],
        b"",
    );
    assert_eq!(local_name.status, 200);
    let foreign_origin = s.send(
        "POST",
        "/api/pool?demo=1",
        &[("Cookie", &cookie), ("Origin", "http://elsewhere.example")],
        b"",
    );
    assert_eq!(foreign_origin.status, 403);
    let cross = s.send(
        "POST",
        "/api/pool?demo=1",
        &[("Cookie", &cookie), ("Sec-Fetch-Site", "cross-site")],
        b"",
    );
    assert_eq!(cross.status, 403);
}

#[test]
fn the_demo_pooled_by_the_server_gives_the_numbers_of_the_command_line() {
    let s = Server::start(&["--demo"]);
    let start = s.get("/api/start").json();
    assert_eq!(start["demo"], true);
    let served = s.post("/api/pool?demo=1&tau2=dl&ci=wald", b"");
    assert_eq!(served.status, 200, "{}", served.text());
    let page = served.json();
    let out = relyard(&[
        "pool",
        &demo_file("candor-benchmark.csv"),
        "--measure",
        "the Brindlewood Team Candor Inventory",
        "--tau2",
        "dl",
        "--ci",
        "wald",
        "--json",
    ]);
    assert!(out.status.success());
    let cli: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    for key in [
        "estimate",
        "se",
        "ci",
        "pi",
        "tau2",
        "i2",
        "k",
        "reliability",
        "paragraph",
    ] {
        assert_eq!(page[key], cli[key], "{key}");
    }
    assert_eq!(page["tau2_method"], "dl");
}

#[test]
fn an_uploaded_sheet_is_pooled_and_a_malformed_one_gets_the_row_and_column() {
    let s = Server::start(&[]);
    let sheet = std::fs::read(demo_file("candor-benchmark.csv")).unwrap();
    let good = s.post("/api/pool?name=mine.csv", &sheet);
    assert_eq!(good.status, 200, "{}", good.text());
    assert!(good.json()["k"].as_u64().unwrap() > 10);
    let bad = b"study,coef,n,items\nA,0.81,120,6\nB,high,95,6\nC,0.77,140,6\nD,0.8,200,6\n";
    let reply = s.post("/api/pool?name=%2Fhome%2Fsomeone%2Fcoded.csv", bad);
    assert_eq!(reply.status, 400);
    let message = reply.json()["error"].as_str().unwrap().to_string();
    assert!(
        message.contains("coded.csv") && message.contains("row 3") && message.contains("coef"),
        "{message}"
    );
    assert!(
        !message.contains("/home/someone"),
        "a sent path is never used: {message}"
    );
    // Left out when asked, and listed.
    let skipped = s.post("/api/pool?name=coded.csv&skip_invalid=1", bad);
    assert_eq!(skipped.status, 200, "{}", skipped.text());
    let doc = skipped.json();
    assert_eq!(doc["k"], 3);
    assert_eq!(doc["skipped_rows"][0]["row"], 3);
    // Garbage, an empty body and an unknown setting: clear errors, and the server goes on.
    assert_eq!(
        s.post("/api/pool?name=x.xlsx", b"PK\x03\x04garbage").status,
        400
    );
    assert_eq!(s.post("/api/pool?name=x.csv", b"").status, 400);
    let unknown = s.post("/api/pool?name=x.csv&output=%2Ftmp%2Fx", &sheet);
    assert_eq!(unknown.status, 400);
    assert!(unknown.text().contains("unknown setting"));
    assert_eq!(s.post("/api/pool?name=again.csv", &sheet).status, 200);
}

#[test]
fn the_figures_come_with_the_document_and_a_label_from_an_upload_is_text() {
    let s = Server::start(&[]);
    let sheet = b"study,coef,n,items\n<script>alert(1)</script>,0.81,120,6\nB,0.75,95,6\nC,0.77,140,6\nD,0.8,200,6\n";
    let reply = s.post("/api/pool?name=labels.csv", sheet);
    assert_eq!(reply.status, 200, "{}", reply.text());
    let doc = reply.json();
    for name in ["forest", "precision"] {
        let svg = doc["figures"][name]
            .as_str()
            .unwrap_or_else(|| panic!("no {name}"));
        assert!(
            svg.trim_start().starts_with("<svg") || svg.contains("<svg"),
            "{name}"
        );
        assert!(
            !svg.contains("<script"),
            "{name} holds markup from the upload"
        );
    }
    let forest = doc["figures"]["forest"].as_str().unwrap();
    // Escaped (and shortened to fit the column of labels).
    assert!(
        forest.contains("&lt;script&gt;alert(1)"),
        "the label shows as text"
    );
}

#[test]
fn an_upload_over_the_limit_is_refused_and_the_server_goes_on() {
    let s = Server::start(&["--max-upload", "2KB"]);
    let big = vec![b'x'; 10_000];
    let reply = s.post("/api/pool?name=big.csv", &big);
    assert_eq!(reply.status, 413);
    let small = b"study,coef,n,items\nA,0.81,120,6\nB,0.75,95,6\nC,0.77,140,6\nD,0.8,200,6\n";
    assert_eq!(s.post("/api/pool?name=small.csv", small).status, 200);
    assert!(!relyard(&["serve", "--max-upload", "lots"]).status.success());
}

#[test]
fn interrupting_the_server_stops_it_cleanly() {
    let s = Server::start(&[]);
    assert_eq!(s.get("/").status, 200);
    let (ok, rest) = s.interrupt();
    assert!(ok, "exit status 0");
    assert!(rest.contains("stopped"), "{rest}");
}

/// Resident memory of a process in kB (Linux), if it can be read.
fn resident_kb(pid: u32) -> Option<u64> {
    let status = std::fs::read_to_string(format!("/proc/{pid}/status")).ok()?;
    status
        .lines()
        .find_map(|l| l.strip_prefix("VmRSS:"))
        .and_then(|v| v.trim().trim_end_matches("kB").trim().parse().ok())
}

/// 20 clients for 10 seconds, pooling uploads and fetching the page: every request
/// answered, and the server's memory no larger at the end than after a first round
/// (within 20 MB: allocator slack, not growth per request).
#[test]
fn concurrent_clients_are_all_answered_without_growing_memory() {
    let s = std::sync::Arc::new(Server::start(&["--demo"]));
    let sheet = std::sync::Arc::new(std::fs::read(demo_file("candor-benchmark.csv")).unwrap());
    let round = |seconds: u64| -> usize {
        let until = std::time::Instant::now() + Duration::from_secs(seconds);
        let workers: Vec<_> = (0..20)
            .map(|i| {
                let (s, sheet) = (s.clone(), sheet.clone());
                std::thread::spawn(move || {
                    let mut answered = 0;
                    while std::time::Instant::now() < until {
                        let reply = if i % 2 == 0 {
                            s.post("/api/pool?name=c.csv", &sheet)
                        } else {
                            s.get("/")
                        };
                        assert_eq!(reply.status, 200);
                        answered += 1;
                    }
                    answered
                })
            })
            .collect();
        workers
            .into_iter()
            .map(|w| w.join().expect("no failure"))
            .sum()
    };
    let warm = round(2);
    let before = resident_kb(s.child.id());
    let total = round(10);
    let after = resident_kb(s.child.id());
    eprintln!(
        "concurrent clients: {warm} then {total} answers; resident {before:?} → {after:?} kB"
    );
    assert!(warm >= 20 && total >= 100, "{warm} then {total} answers");
    if let (Some(b), Some(a)) = (before, after) {
        assert!(
            a < b + 20_000,
            "memory grew from {b} kB to {a} kB over {total} requests"
        );
    }
}

/// The page in headless Chromium: opened from the token address with `--demo`, it pools the
/// demo and shows the numbers and paragraph of `relyard pool --json`, with no console error.
/// CI sets RELYARD_REQUIRE_BROWSER=1, so there a missing browser fails the test.
#[test]
fn the_page_in_a_browser_shows_the_numbers_of_the_command_line() {
    let Some(browser) = chromium() else {
        assert!(
            std::env::var_os("RELYARD_REQUIRE_BROWSER").is_none(),
            "RELYARD_REQUIRE_BROWSER is set but no Chromium was found"
        );
        eprintln!("note: Chromium not found; the browser test of the page was skipped");
        return;
    };
    let s = Server::start(&["--demo"]);
    let dir = scratch("serve-browser");
    let dom = rendered_dom(
        &browser,
        &dir.join("profile"),
        &format!("http://127.0.0.1:{}/open?token={}", s.port, s.token),
        10_000,
    );
    let cli = relyard(&[
        "pool",
        &demo_file("candor-benchmark.csv"),
        "--measure",
        "the Brindlewood Team Candor Inventory",
        "--json",
    ]);
    let cli: serde_json::Value = serde_json::from_slice(&cli.stdout).unwrap();
    let r = &cli["reliability"];
    let cell = |id: &str| -> String {
        let start = dom
            .find(&format!("id=\"{id}\""))
            .unwrap_or_else(|| panic!("no {id} in the page: {dom}"));
        let rest = &dom[start..];
        let open = rest.find('>').unwrap() + 1;
        let close = rest.find("</").unwrap();
        rest[open..close].to_string()
    };
    let f3 = |v: &serde_json::Value| format!("{:.3}", v.as_f64().unwrap());
    assert_eq!(cell("r-estimate"), f3(&r["estimate"]));
    assert_eq!(
        cell("r-ci"),
        format!("{} to {}", f3(&r["ci"][0]), f3(&r["ci"][1]))
    );
    assert_eq!(
        cell("r-pi"),
        format!("{} to {}", f3(&r["pi"][0]), f3(&r["pi"][1]))
    );
    assert_eq!(cell("r-k"), cli["k"].to_string());
    for id in ["forest", "precision"] {
        let start = dom.find(&format!("id=\"{id}\"")).expect("the figure");
        let tag = &dom[dom[..start].rfind('<').unwrap()..];
        let tag = &tag[..tag.find('>').unwrap()];
        assert!(tag.contains("src=\"data:image/svg+xml"), "{id}: {tag}");
    }
    let paragraph = cli["paragraph"].as_str().unwrap();
    let shown = cell("paragraph").replace("&amp;", "&");
    assert_eq!(shown, paragraph);
}

/// Every text the page shows from an upload goes in as text: the script never writes markup.
#[test]
fn the_page_script_never_writes_markup() {
    let script = std::fs::read_to_string(
        std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("src/cli/serve/page/app.js"),
    )
    .unwrap();
    for sink in [
        "innerHTML",
        "outerHTML",
        "insertAdjacentHTML",
        "document.write",
        "eval(",
    ] {
        assert!(!script.contains(sink), "app.js uses {sink}");
    }
    assert!(script.contains("textContent"));
}

#[test]
fn a_new_study_placed_by_the_server_gets_the_verdict_of_the_command_line() {
    let s = Server::start(&[]);
    let sheet = std::fs::read(demo_file("candor-benchmark.csv")).unwrap();
    let reply = s.post(
        "/api/check?name=sheet.csv&coef=0.66&n=180&items=8&coef_type=alpha&tau2=pm",
        &sheet,
    );
    assert_eq!(reply.status, 200, "{}", reply.text());
    let page = reply.json();
    let out = relyard(&[
        "check",
        &demo_file("candor-benchmark.csv"),
        "--coef",
        "0.66",
        "--n",
        "180",
        "--items",
        "8",
        "--tau2",
        "pm",
        "--json",
    ]);
    assert!(out.status.success());
    let cli: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    for key in [
        "coef",
        "expected",
        "pi",
        "pi_observed",
        "percentile",
        "verdict",
        "paragraph",
    ] {
        assert_eq!(page[key], cli[key], "{key}");
    }
    assert!(
        page["figures"]["placement"]
            .as_str()
            .unwrap()
            .contains("<svg")
    );
    // A study without its n is the command line's usage error, in the page's words.
    let missing = s.post("/api/check?name=sheet.csv&coef=0.66", &sheet);
    assert_eq!(missing.status, 400);
    let error = missing.json()["error"].as_str().unwrap().to_string();
    assert!(error.contains("“Respondents (n)” (Your study)"), "{error}");
    assert!(
        !error.contains("--n") && !error.contains("Usage:"),
        "{error}"
    );
}

/// A ChromeDriver session over the W3C WebDriver protocol (plain HTTP and JSON).
struct Driver {
    child: Child,
    port: u16,
    session: String,
}

impl Driver {
    fn start(browser: &std::path::Path, profile: &std::path::Path) -> Option<Driver> {
        let port = std::net::TcpListener::bind("127.0.0.1:0")
            .ok()?
            .local_addr()
            .ok()?
            .port();
        let child = Command::new("chromedriver")
            .arg(format!("--port={port}"))
            .stdout(Stdio::null())
            .stderr(Stdio::null())
            .spawn()
            .ok()?;
        let mut d = Driver {
            child,
            port,
            session: String::new(),
        };
        let ready = (0..100).any(|_| {
            std::thread::sleep(Duration::from_millis(100));
            TcpStream::connect(("127.0.0.1", port)).is_ok()
        });
        assert!(ready, "chromedriver did not start");
        let caps = serde_json::json!({"capabilities": {"alwaysMatch": {
            "browserName": "chrome",
            "goog:loggingPrefs": {"browser": "ALL"},
            "goog:chromeOptions": {
                "binary": browser.to_string_lossy(),
                // Downloads go beside the profile, without asking.
                "prefs": {
                    "download.default_directory": profile.with_file_name("downloads").to_string_lossy(),
                    "download.prompt_for_download": false
                },
                "args": ["--headless=new", "--no-sandbox", "--disable-gpu",
                         "--disable-dev-shm-usage", "--window-size=1100,2400",
                         format!("--user-data-dir={}", profile.display())]
            }
        }}});
        let v = d.call("POST", "/session", Some(caps));
        d.session = v["sessionId"]
            .as_str()
            .unwrap_or_else(|| panic!("no session: {v}"))
            .to_string();
        Some(d)
    }

    /// One WebDriver command; its `value`.
    fn call(&self, method: &str, path: &str, body: Option<serde_json::Value>) -> serde_json::Value {
        let body = body.map(|b| b.to_string()).unwrap_or_default();
        let mut s = TcpStream::connect(("127.0.0.1", self.port)).expect("chromedriver");
        s.set_read_timeout(Some(Duration::from_secs(60))).unwrap();
        let head = format!(
            "{method} {path} HTTP/1.1\r\nHost: 127.0.0.1:{}\r\nConnection: close\r\n\
             Content-Type: application/json\r\nContent-Length: {}\r\n\r\n",
            self.port,
            body.len()
        );
        s.write_all(head.as_bytes()).unwrap();
        s.write_all(body.as_bytes()).unwrap();
        let reply = read_reply(&mut s);
        let v = reply.json();
        assert!(reply.status < 400, "{method} {path}: {v}");
        v["value"].clone()
    }

    fn at(&self, path: &str) -> String {
        format!("/session/{}{path}", self.session)
    }

    fn element(&self, css: &str) -> String {
        let v = self.call(
            "POST",
            &self.at("/element"),
            Some(serde_json::json!({"using": "css selector", "value": css})),
        );
        v.as_object()
            .and_then(|o| o.values().next())
            .and_then(|e| e.as_str())
            .unwrap_or_else(|| panic!("no element {css}: {v}"))
            .to_string()
    }

    fn click(&self, css: &str) {
        let e = self.element(css);
        self.call(
            "POST",
            &self.at(&format!("/element/{e}/click")),
            Some(serde_json::json!({})),
        );
    }

    fn type_into(&self, css: &str, text: &str) {
        let e = self.element(css);
        self.call(
            "POST",
            &self.at(&format!("/element/{e}/value")),
            Some(serde_json::json!({"text": text})),
        );
    }

    /// A property of an element (an input's `value`, a button's `disabled`).
    fn property(&self, css: &str, name: &str) -> serde_json::Value {
        let e = self.element(css);
        self.call(
            "GET",
            &self.at(&format!("/element/{e}/property/{name}")),
            None,
        )
    }

    fn text(&self, css: &str) -> String {
        let e = self.element(css);
        self.call("GET", &self.at(&format!("/element/{e}/text")), None)
            .as_str()
            .unwrap_or_default()
            .to_string()
    }

    /// Wait up to 20 s until the text of `css` satisfies `ok`; the text.
    fn wait_for(&self, css: &str, ok: impl Fn(&str) -> bool) -> String {
        for _ in 0..200 {
            let t = self.text(css);
            if ok(&t) {
                return t;
            }
            std::thread::sleep(Duration::from_millis(100));
        }
        panic!(
            "{css} never became as expected (last: {:?})",
            self.text(css)
        );
    }

    fn screenshot(&self, file: &std::path::Path) {
        let b64 = self.call("GET", &self.at("/screenshot"), None);
        let bytes = base64_decode(b64.as_str().expect("base64"));
        assert!(bytes.starts_with(b"\x89PNG"), "a PNG");
        std::fs::create_dir_all(file.parent().unwrap()).unwrap();
        std::fs::write(file, bytes).unwrap();
    }

    /// The text of an open alert dialog, if one is open.
    fn alert_open(&self) -> Option<String> {
        let mut s = TcpStream::connect(("127.0.0.1", self.port)).expect("chromedriver");
        let head = format!(
            "GET {} HTTP/1.1\r\nHost: 127.0.0.1:{}\r\nConnection: close\r\n\r\n",
            self.at("/alert/text"),
            self.port
        );
        s.write_all(head.as_bytes()).unwrap();
        let reply = read_reply(&mut s);
        (reply.status == 200).then(|| reply.json()["value"].to_string())
    }

    /// The browser console's messages of level SEVERE.
    fn severe_console(&self) -> Vec<String> {
        let v = self.call(
            "POST",
            &self.at("/se/log"),
            Some(serde_json::json!({"type": "browser"})),
        );
        v.as_array()
            .map(|a| {
                a.iter()
                    .filter(|e| e["level"] == "SEVERE")
                    .map(|e| e["message"].to_string())
                    .collect()
            })
            .unwrap_or_default()
    }
}

impl Drop for Driver {
    fn drop(&mut self) {
        if !self.session.is_empty() {
            let path = format!("/session/{}", self.session);
            let _ = std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| {
                self.call("DELETE", &path, None)
            }));
        }
        let _ = self.child.kill();
        let _ = self.child.wait();
    }
}

fn base64_decode(text: &str) -> Vec<u8> {
    let value = |c: u8| -> Option<u32> {
        Some(match c {
            b'A'..=b'Z' => c - b'A',
            b'a'..=b'z' => c - b'a' + 26,
            b'0'..=b'9' => c - b'0' + 52,
            b'+' => 62,
            b'/' => 63,
            _ => return None,
        } as u32)
    };
    let mut out = Vec::new();
    let (mut acc, mut bits) = (0u32, 0);
    for v in text.bytes().filter_map(value) {
        acc = (acc << 6) | v;
        bits += 6;
        if bits >= 8 {
            bits -= 8;
            out.push((acc >> bits) as u8);
            acc &= (1 << bits) - 1;
        }
    }
    out
}

/// A server on the demo and a browser driven to its page (a scratch folder `name` for the
/// browser's profile and downloads); `None`, with a notice, when Chromium or ChromeDriver
/// is missing (a failure instead when RELYARD_REQUIRE_BROWSER is set, as CI sets it).
fn driven_demo(name: &str) -> Option<(Server, Driver, std::path::PathBuf)> {
    let have_driver = Command::new("chromedriver")
        .arg("--version")
        .output()
        .is_ok_and(|o| o.status.success());
    let Some(browser) = chromium().filter(|_| have_driver) else {
        assert!(
            std::env::var_os("RELYARD_REQUIRE_BROWSER").is_none(),
            "RELYARD_REQUIRE_BROWSER is set but Chromium or ChromeDriver was not found"
        );
        eprintln!("note: Chromium or ChromeDriver not found; the driven page test was skipped");
        return None;
    };
    let s = Server::start(&["--demo"]);
    let dir = scratch(name);
    let d = Driver::start(&browser, &dir.join("profile")).expect("chromedriver runs");
    d.call(
        "POST",
        &d.at("/url"),
        Some(serde_json::json!({
            "url": format!("http://127.0.0.1:{}/open?token={}", s.port, s.token)
        })),
    );
    Some((s, d, dir))
}

/// The page driven as a user would, in headless Chromium through ChromeDriver: the demo
/// loads, the estimator is changed and the sheet pooled again, a new study is entered and
/// its verdict read — each number as the command line gives it — with no console error;
/// a screenshot is kept in target/test-artefacts/. CI installs both and sets
/// RELYARD_REQUIRE_BROWSER=1; elsewhere the test skips without them.
#[test]
fn the_page_driven_in_a_browser_gives_the_command_lines_numbers() {
    let Some((_server, d, dir)) = driven_demo("serve-driven") else {
        return;
    };
    let cli = |extra: &[&str]| -> serde_json::Value {
        let demo = demo_file("candor-benchmark.csv");
        let mut args = vec![extra[0], demo.as_str()];
        args.extend_from_slice(&extra[1..]);
        args.push("--json");
        let out = relyard(&args);
        assert!(
            out.status.success(),
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
        serde_json::from_slice(&out.stdout).unwrap()
    };
    let f3 = |v: &serde_json::Value| format!("{:.3}", v.as_f64().unwrap());
    let reml = cli(&["pool"]);
    d.wait_for("#r-estimate", |t| t == f3(&reml["reliability"]["estimate"]));
    // Change the estimator and pool again.
    let dl = cli(&["pool", "--tau2", "dl"]);
    assert_ne!(
        f3(&dl["tau2"]),
        f3(&reml["tau2"]),
        "the demo tells the estimators apart"
    );
    d.click("#tau2 option[value=dl]");
    d.click("#run");
    let tau2 = format!("{:.4}", dl["tau2"].as_f64().unwrap());
    d.wait_for("#r-tau2", |t| t == tau2);
    assert_eq!(d.text("#r-estimate"), f3(&dl["reliability"]["estimate"]));
    // A new study.
    d.type_into("#s-coef", "0.66");
    d.type_into("#s-n", "180");
    d.type_into("#s-items", "8");
    d.click("#place");
    let check = cli(&[
        "check", "--tau2", "dl", "--coef", "0.66", "--n", "180", "--items", "8",
    ]);
    let verdict = d.wait_for("#verdict", |t| !t.is_empty());
    assert!(
        verdict.contains(check["verdict"].as_str().unwrap()),
        "{verdict} vs {}",
        check["verdict"]
    );
    assert_eq!(
        d.text("#c-percentile"),
        format!("{:.0}", check["percentile"].as_f64().unwrap())
    );
    d.screenshot(
        &std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
            .join("target/test-artefacts/serve-page-driven.png"),
    );
    // An uploaded sheet whose study label is a script: pooled, shown, and nothing runs.
    let xss = dir.join("labels.csv");
    std::fs::write(
        &xss,
        "study,coef,n,items\n<script>alert(1)</script>,0.81,120,6\nB,0.75,95,6\nC,0.77,140,6\nD,0.8,200,6\n",
    )
    .unwrap();
    d.type_into("#sheet", &xss.to_string_lossy());
    d.click("#run");
    d.wait_for("#status", |t| t == "Pooled labels.csv.");
    assert_eq!(d.text("#r-k"), "4");
    let forest = d.element("#forest");
    let src = d.call(
        "GET",
        &d.at(&format!("/element/{forest}/attribute/src")),
        None,
    );
    assert!(
        src.as_str()
            .unwrap_or_default()
            .contains("%26lt%3Bscript%26gt%3B"),
        "the label is escaped text in the figure"
    );
    assert!(d.alert_open().is_none(), "a script from the upload ran");
    let severe = d.severe_console();
    assert!(severe.is_empty(), "browser console: {severe:?}");
}

/// The page's other steps driven as a user would: a moderator chosen under Explain (its
/// coefficient as the command line gives it), the demo's item data uploaded and analysed with two items
/// reverse-keyed and the coefficient carried into Your study, the study placed at a
/// moderator value, and the report downloaded as a zip whose results are the command
/// line's; no console error; screenshots kept in target/test-artefacts/.
#[test]
fn the_page_driven_through_explain_items_study_and_report() {
    let Some((_server, d, dir)) = driven_demo("serve-driven-steps") else {
        return;
    };
    let sheet = demo_file("candor-benchmark.csv");
    let artefacts = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("target/test-artefacts");
    let pooled = cli_json(&["pool", &sheet, "--json"]);
    let f3 = |v: &serde_json::Value| format!("{:.3}", v.as_f64().unwrap());
    d.wait_for("#r-estimate", |t| {
        t == f3(&pooled["reliability"]["estimate"])
    });
    // Explain: the first other column of the demo sheet is its year.
    assert_eq!(d.property("#mod-0", "dataset")["moderator"], "year");
    d.click("#mod-0");
    d.click("#explain");
    let explained = cli_json(&["explain", &sheet, "--moderator", "year", "--json"]);
    let year = &explained["coefficients"][1];
    let estimate = format!("{:.4}", year["estimate"].as_f64().unwrap());
    d.wait_for("#coefficients", |t| t.contains("year"));
    let table = d.text("#coefficients");
    assert!(table.contains(&estimate), "{table} lacks {estimate}");
    d.screenshot(&artefacts.join("serve-page-explain.png"));
    // Your items: the demo's item data want two items reverse-keyed first.
    d.type_into("#item-file", &demo_file("candor-items.csv"));
    d.click("#items-run");
    d.wait_for("#carry", |t| t.starts_with("Nothing to carry"));
    d.type_into("#i-reverse", "btci_04,btci_09");
    d.type_into("#i-min", "1");
    d.type_into("#i-max", "5");
    d.click("#items-run");
    let items = cli_json(&[
        "items",
        &demo_file("candor-items.csv"),
        "--reverse",
        "btci_04,btci_09",
        "--scale-min",
        "1",
        "--scale-max",
        "5",
        "--json",
    ]);
    assert_eq!(items["recommendation"], "omega");
    let omega = f3(&items["omega"]);
    d.wait_for("#carry", |t| t.contains(&omega));
    // The greatest lower bound and the methods paragraph, as the command line gives them.
    let glb = d.text("#i-glb");
    assert!(glb.starts_with(&f3(&items["glb"]["value"])), "{glb}");
    assert_eq!(d.text("#i-paragraph"), items["paragraph"].as_str().unwrap());
    d.click("#carry");
    assert_eq!(d.property("#s-coef", "value"), omega.as_str());
    assert_eq!(
        d.property("#s-n", "value"),
        items["n_used"].to_string().as_str()
    );
    assert_eq!(d.property("#s-type", "value"), "omega");
    let sd = f3(&items["score"]["sum_sd"]);
    assert_eq!(d.property("#s-sd", "value"), sd.as_str());
    // Your study, at a year (the moderator chosen above).
    d.type_into("#at-0", "2021");
    d.click("#place");
    let check = cli_json(&[
        "check",
        &sheet,
        "--moderator",
        "year",
        "--at",
        "year=2021",
        "--coef",
        &omega,
        "--n",
        &items["n_used"].to_string(),
        "--items",
        "10",
        "--coef-type",
        "omega",
        "--sd",
        &sd,
        "--sd-metric",
        "sum",
        "--scale-min",
        "1",
        "--scale-max",
        "5",
        "--json",
    ]);
    let verdict = d.wait_for("#verdict", |t| !t.is_empty());
    assert!(
        verdict.contains(check["verdict"].as_str().unwrap()),
        "{verdict} vs {}",
        check["verdict"]
    );
    assert_eq!(d.text("#c-expected"), f3(&check["expected"]));
    d.screenshot(&artefacts.join("serve-page-study.png"));
    // Retest and raters: a table uploaded through the file input.
    let table = dir.join("retest.csv");
    std::fs::write(
        &table,
        "person,t1,t2\nP1,12,13\nP2,18,17\nP3,9,11\nP4,15,16\nP5,21,20\nP6,14,15\n",
    )
    .unwrap();
    d.type_into("#icc-file", &table.to_string_lossy());
    d.click("#icc-run");
    d.wait_for("#icc-headline", |t| t.starts_with("6 rows"));
    let icc = cli_json(&["icc", &table.to_string_lossy(), "--json"]);
    let forms = d.text("#icc-forms");
    let agreement = f3(&icc["forms"][8]["value"]);
    assert_eq!(icc["forms"][8]["model"], "two-way-mixed");
    assert!(forms.contains(&agreement), "{forms} lacks {agreement}");
    // The report: downloaded as a zip, with the command that writes it.
    d.click("#report");
    d.wait_for("#report-status", |t| {
        t.starts_with("Downloaded") || !d.text("#report-problems").is_empty()
    });
    assert_eq!(d.text("#report-problems"), "");
    let command = d.property("#report-command", "value");
    assert!(
        command.as_str().unwrap().starts_with("relyard report "),
        "{command}"
    );
    let zip_path = dir.join("downloads").join("relyard-report.zip");
    let ready = (0..100).any(|_| {
        std::thread::sleep(Duration::from_millis(100));
        std::fs::metadata(&zip_path).is_ok_and(|m| m.len() > 0)
    });
    assert!(ready, "no zip in {}", zip_path.display());
    let bytes = std::fs::read(&zip_path).unwrap();
    let mut archive = zip::ZipArchive::new(std::io::Cursor::new(bytes)).unwrap();
    let mut results = String::new();
    archive
        .by_name("relyard-report/results.json")
        .unwrap()
        .read_to_string(&mut results)
        .unwrap();
    let results: serde_json::Value = serde_json::from_str(&results).unwrap();
    assert_eq!(results["placement"]["verdict"], check["verdict"]);
    assert_eq!(results["placement"]["expected"], check["expected"]);
    assert!(archive.by_name("relyard-report/report.html").is_ok());
    d.screenshot(&artefacts.join("serve-page-report.png"));
    let severe = d.severe_console();
    assert!(severe.is_empty(), "browser console: {severe:?}");
}

/// Read one HTTP reply: the head, then exactly Content-Length bytes (a server may keep the
/// connection open after it).
fn read_reply(s: &mut TcpStream) -> Reply {
    let mut raw = Vec::new();
    let mut buf = [0u8; 65536];
    loop {
        // A reset after the reply (a refused upload) ends the reading as a close does.
        let n = s.read(&mut buf).unwrap_or(0);
        if n == 0 {
            break;
        }
        raw.extend_from_slice(&buf[..n]);
        if let Some(end) = raw.windows(4).position(|w| w == b"\r\n\r\n") {
            let head = String::from_utf8_lossy(&raw[..end]).to_ascii_lowercase();
            let length = head
                .lines()
                .find_map(|l| l.strip_prefix("content-length:"))
                .and_then(|v| v.trim().parse::<usize>().ok());
            if let Some(length) = length
                && raw.len() >= end + 4 + length
            {
                break;
            }
        }
    }
    Reply::parse(&raw)
}

/// The JSON document a command prints.
fn cli_json(args: &[&str]) -> serde_json::Value {
    let out = relyard(args);
    assert!(
        out.status.success(),
        "{args:?}: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    serde_json::from_slice(&out.stdout).unwrap()
}

#[test]
fn the_explain_items_and_correction_steps_give_the_command_lines_numbers() {
    let s = Server::start(&["--demo"]);
    let sheet = demo_file("candor-benchmark.csv");
    // Explain: a numeric and a categorical moderator with its reference level, a
    // permutation test and subgroups.
    let served = s.post(
        "/api/explain?demo=1&moderator=year&moderator=field_maturity\
         &reference=field_maturity=exploratory&permutations=500&by=language",
        b"",
    );
    assert_eq!(served.status, 200, "{}", served.text());
    let page = served.json();
    let cli = cli_json(&[
        "explain",
        &sheet,
        "--moderator",
        "year",
        "--moderator",
        "field_maturity",
        "--reference",
        "field_maturity=exploratory",
        "--permutations",
        "500",
        "--by",
        "language",
        "--json",
    ]);
    for key in [
        "coefficients",
        "tau2",
        "r2",
        "omnibus",
        "subgroups",
        "permutations",
    ] {
        assert_eq!(page[key], cli[key], "{key}");
    }
    let figures = page["figures"].as_array().expect("figures");
    assert_eq!(figures.len(), 1, "one numeric moderator, one figure");
    assert!(figures[0]["svg"].as_str().unwrap().starts_with("<svg"));

    // Your items: the demo's item data, two items reverse-keyed.
    let served = s.post(
        "/api/items?demo=1&reverse=btci_04,btci_09&scale_min=1&scale_max=5",
        b"",
    );
    assert_eq!(served.status, 200, "{}", served.text());
    let page = served.json();
    let cli = cli_json(&[
        "items",
        &demo_file("candor-items.csv"),
        "--reverse",
        "btci_04,btci_09",
        "--scale-min",
        "1",
        "--scale-max",
        "5",
        "--json",
    ]);
    for key in [
        "alpha",
        "omega",
        "n_used",
        "items",
        "tau_equivalence",
        "recommendation",
        "score",
        "glb",
    ] {
        assert_eq!(page[key], cli[key], "{key}");
    }
    // Ordinal items: the polychoric part as the command line gives it.
    let ordinal = s.post("/api/items?demo=1&ordinal=1", b"").json();
    let cli_ordinal = cli_json(&[
        "items",
        &demo_file("candor-items.csv"),
        "--ordinal",
        "--json",
    ]);
    assert_eq!(ordinal["ordinal"], cli_ordinal["ordinal"]);
    assert!(ordinal["ordinal"]["alpha"].as_f64().is_some());
    assert!(ordinal["ordinal"]["omega"].as_f64().is_some());
    // An uploaded item file is read from memory, under the name the page gave.
    let items = std::fs::read(demo_file("candor-items.csv")).unwrap();
    let up = s.post("/api/items?name=mine.csv", &items).json();
    assert_eq!(up["input"]["file"], "mine.csv");
    let plain = cli_json(&["items", &demo_file("candor-items.csv"), "--json"]);
    assert_eq!(up["alpha"], plain["alpha"]);
    assert_eq!(up["omega"], plain["omega"]);

    // Correction with values, and with the benchmark as the measure's reliability.
    let served = s.post(
        "/api/correct?r=0.3&n=200&rel_x=0.8,n=200,items=10&rel_y=0.7",
        b"",
    );
    assert_eq!(served.status, 200, "{}", served.text());
    let page = served.json();
    let cli = cli_json(&[
        "correct",
        "--r",
        "0.3",
        "--n",
        "200",
        "--rel-x",
        "0.8,n=200,items=10",
        "--rel-y",
        "0.7",
        "--json",
    ]);
    for key in ["corrected", "ci", "mc_ci", "reliabilities", "sensitivity"] {
        assert_eq!(page[key], cli[key], "{key}");
    }
    assert!(
        page["figures"]["sensitivity"]
            .as_str()
            .unwrap()
            .starts_with("<svg")
    );
    let served = s.post(
        "/api/correct-with-benchmark?demo=1&r=0.3&n=200&rel_y=0.7",
        b"",
    );
    assert_eq!(served.status, 200, "{}", served.text());
    let rel_x = &served.json()["reliabilities"][0];
    assert_eq!(rel_x["kind"], "benchmark");
    let pooled = cli_json(&["pool", &sheet, "--json"]);
    assert_eq!(rel_x["value"], pooled["reliability"]["estimate"]);
    // A regression from the demo study's raw data, and from an uploaded summary matrix.
    let served = s.post(
        "/api/correct-regression?demo=1&outcome=engagement&predictor=candor&predictor=safety\
         &rel=candor=0.85&rel=safety=0.8,n=250,items=6",
        b"",
    );
    assert_eq!(served.status, 200, "{}", served.text());
    let page = served.json();
    let cli = cli_json(&[
        "correct",
        "--data",
        &demo_file("candor-study.csv"),
        "--outcome",
        "engagement",
        "--predictor",
        "candor",
        "--predictor",
        "safety",
        "--rel",
        "candor=0.85",
        "--rel",
        "safety=0.8,n=250,items=6",
        "--json",
    ]);
    for key in ["coefficients", "r2", "reliabilities", "n"] {
        assert_eq!(page[key], cli[key], "{key}");
    }
    assert_eq!(page["data_file"], "candor-study.csv");
    let summary = "variable,x,y\nx,1,0.3\ny,0.3,1\n";
    let served = s.post(
        "/api/correct-regression?source=summary&name=m.csv&n=150&outcome=y&predictor=x&rel=x=0.7",
        summary.as_bytes(),
    );
    assert_eq!(served.status, 200, "{}", served.text());
    let slope = served.json()["coefficients"][0]["corrected"]
        .as_f64()
        .unwrap();
    // One standardized predictor: the corrected slope is r / reliability.
    assert!((slope - 0.3 / 0.7).abs() < 1e-9, "{slope}");
    let refused = s.post(
        "/api/correct-regression?demo=1&outcome=engagement&predictor=candor&rel=candor=sheet=/x",
        b"",
    );
    assert_eq!(refused.status, 400, "{}", refused.text());
    // A reliability that would open a file is refused before anything runs.
    let refused = s.post(
        "/api/correct?r=0.3&n=200&rel_x=sheet=/etc/hostname&rel_y=0.7",
        b"",
    );
    assert_eq!(refused.status, 400);
    assert!(refused.text().contains("not one"), "{}", refused.text());
}

#[test]
fn the_report_zip_is_the_report_its_command_writes() {
    let s = Server::start(&["--demo"]);
    let query = "demo=1&tau2=pm&moderator=year&coef=0.81&n=140&items=10&at=year=2021\
                 &r=0.32&rel_y=0.76";
    let command = s.post(&format!("/api/report-command?{query}"), b"").json();
    let command = command["command"].as_str().unwrap().to_string();
    assert!(command.starts_with("relyard report "), "{command}");
    let zip = s.post(&format!("/api/report?{query}"), b"");
    assert_eq!(zip.status, 200, "{}", zip.text());
    assert_eq!(zip.header("content-type"), Some("application/zip"));
    let mut archive = zip::ZipArchive::new(std::io::Cursor::new(zip.body.clone())).unwrap();
    let mut names: Vec<String> = (0..archive.len())
        .map(|i| archive.by_index(i).unwrap().name().unwrap().into_owned())
        .collect();
    names.sort();
    // The command, run where the sheet is, writes the same files with the same results.
    let dir = scratch("serve-report");
    std::fs::copy(
        demo_file("candor-benchmark.csv"),
        dir.join("candor-benchmark.csv"),
    )
    .unwrap();
    let out = Command::new("sh")
        .arg("-c")
        .arg(command.replacen("relyard", env!("CARGO_BIN_EXE_relyard"), 1))
        .current_dir(&dir)
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let written = dir.join("relyard-report");
    let mut on_disk: Vec<String> = Vec::new();
    for entry in std::fs::read_dir(&written).unwrap() {
        let e = entry.unwrap();
        let name = e.file_name().to_string_lossy().into_owned();
        if e.path().is_dir() {
            for f in std::fs::read_dir(e.path()).unwrap() {
                on_disk.push(format!(
                    "relyard-report/{name}/{}",
                    f.unwrap().file_name().to_string_lossy()
                ));
            }
        } else if !name.starts_with('.') {
            on_disk.push(format!("relyard-report/{name}"));
        }
    }
    on_disk.sort();
    let listed: Vec<&String> = names.iter().collect();
    assert!(
        on_disk.iter().all(|n| names.contains(n)),
        "{on_disk:?} vs {listed:?}"
    );
    for file in ["results.json", "report.md"] {
        let mut zipped = String::new();
        archive
            .by_name(&format!("relyard-report/{file}"))
            .unwrap()
            .read_to_string(&mut zipped)
            .unwrap();
        let disk = std::fs::read_to_string(written.join(file)).unwrap();
        assert_eq!(zipped, disk, "{file}");
    }
    assert!(names.iter().any(|n| n.ends_with("figures/placement.svg")));
    assert!(names.iter().any(|n| n.ends_with("figures/correction.png")));
}

#[test]
fn a_long_permutation_test_shows_its_progress_and_stops_when_asked() {
    let s = Server::start(&["--demo"]);
    std::thread::scope(|scope| {
        let running = scope.spawn(|| {
            s.post(
                "/api/explain?demo=1&moderator=year&permutations=1000000&job=long-1",
                b"",
            )
        });
        // Wait until it has begun and made progress.
        let mut seen = None;
        for _ in 0..200 {
            let p = s.get("/api/progress?job=long-1");
            if p.status == 200 {
                let p = p.json();
                if p["running"] == true && p["done"].as_u64().unwrap_or(0) > 0 {
                    seen = Some(p);
                    break;
                }
            }
            std::thread::sleep(Duration::from_millis(50));
        }
        let seen = seen.expect("progress was shown");
        assert_eq!(seen["task"], "permutations");
        assert_eq!(seen["total"], 1_000_000);
        assert!(seen["done"].as_u64().unwrap() < 1_000_000);
        assert_eq!(s.post("/api/stop?job=long-1", b"").json()["stopping"], true);
        let answer = running.join().unwrap();
        assert_eq!(answer.status, 400);
        assert!(answer.text().contains("stopped"), "{}", answer.text());
    });
    // The job is gone and the server goes on.
    assert_eq!(s.get("/api/progress?job=long-1").json()["running"], false);
    assert_eq!(
        s.post("/api/stop?job=long-1", b"").json()["stopping"],
        false
    );
    assert_eq!(s.post("/api/pool?demo=1", b"").status, 200);
    // A job name that is not one is refused.
    let bad = s.post("/api/explain?demo=1&moderator=year&job=a%20b", b"");
    assert_ne!(bad.status, 200);
}

#[test]
fn a_workbook_upload_lists_its_worksheets_and_reads_the_one_chosen() {
    use crate::workbooks::{Cell, write_xlsx};
    let dir = scratch("serve-workbook");
    let data = vec![
        vec![
            Cell::Text("study"),
            Cell::Text("coef"),
            Cell::Text("n"),
            Cell::Text("items"),
        ],
        vec![
            Cell::Text("A"),
            Cell::Num(0.81),
            Cell::Num(120.0),
            Cell::Num(8.0),
        ],
        vec![
            Cell::Text("B"),
            Cell::Num(0.74),
            Cell::Num(95.0),
            Cell::Num(8.0),
        ],
        vec![
            Cell::Text("C"),
            Cell::Num(0.86),
            Cell::Num(300.0),
            Cell::Num(8.0),
        ],
    ];
    let xlsx = dir.join("two.xlsx");
    write_xlsx(
        &xlsx,
        &[
            ("Notes", 1, vec![vec![Cell::Text("read me")]]),
            ("Data", 1, data),
        ],
    );
    let bytes = std::fs::read(&xlsx).unwrap();
    let s = Server::start(&[]);
    // The first worksheet has no coef column: the command line's message, naming it.
    let first = s.post("/api/pool?name=two.xlsx", &bytes);
    assert_eq!(first.status, 400);
    assert!(first.text().contains("no coef column"), "{}", first.text());
    let chosen = s.post("/api/pool?name=two.xlsx&worksheet=Data", &bytes);
    assert_eq!(chosen.status, 200, "{}", chosen.text());
    let doc = chosen.json();
    assert_eq!(doc["k"], 3);
    assert_eq!(doc["worksheets"], serde_json::json!(["Notes", "Data"]));
    assert_eq!(doc["input"]["sheet_name"], "Data");
}

#[test]
fn a_request_the_page_abandons_stops_its_analysis() {
    let s = Server::start(&["--demo"]);
    // The request is sent and the connection closed without reading the answer (as a page
    // that stops waiting does).
    let path = "/api/explain?demo=1&moderator=year&permutations=1000000&job=left-1";
    let mut c = TcpStream::connect(("127.0.0.1", s.port)).unwrap();
    let head = format!(
        "POST {path} HTTP/1.1\r\nHost: {}\r\nCookie: {}\r\nOrigin: http://{}\r\n\
         Content-Length: 0\r\n\r\n",
        s.host(),
        s.cookie(),
        s.host()
    );
    c.write_all(head.as_bytes()).unwrap();
    let started = (0..200).any(|_| {
        std::thread::sleep(Duration::from_millis(25));
        s.get("/api/progress?job=left-1").json()["done"]
            .as_u64()
            .is_some_and(|d| d > 0)
    });
    assert!(started, "the permutation test began");
    drop(c);
    // The server notices, stops the analysis and forgets the job.
    let ended = (0..200).any(|_| {
        std::thread::sleep(Duration::from_millis(25));
        s.get("/api/progress?job=left-1").json()["running"] == false
    });
    assert!(ended, "the abandoned job was still running after 5 s");
    assert_eq!(s.post("/api/pool?demo=1", b"").status, 200);
}

#[test]
fn an_uploaded_table_gets_the_intraclass_correlations_of_the_command_line() {
    let s = Server::start(&[]);
    let table = b"person,t1,t2,t3\nP1,12,13,12\nP2,18,17,19\nP3,9,11,10\nP4,15,,14\n\
                  P5,21,20,22\nP6,14,15,13\nP7,11,12,13\n";
    let served = s.post("/api/icc?name=retest.csv&columns=t1,t2,t3", table);
    assert_eq!(served.status, 200, "{}", served.text());
    let page = served.json();
    let dir = scratch("serve-icc");
    let path = write_file(&dir, "retest.csv", table);
    let cli = cli_json(&["icc", &path, "--columns", "t1,t2,t3", "--json"]);
    for key in ["n", "k", "forms", "sem", "sdc", "rows_left_out", "guidance"] {
        assert_eq!(page[key], cli[key], "{key}");
    }
    assert_eq!(page["input"]["file"], "retest.csv");
    assert_eq!(page["rows_left_out"], 1);
}
