//! `relyard serve`: the browser face. A web server on 127.0.0.1 that serves one page (held
//! in the binary: no request leaves the machine) and answers its requests with the same
//! analysis layer as the command line. Uploads stay in memory; no path sent by the page is
//! ever opened; every request must carry the launch token and name this server as its host
//! and origin (see `guard`).
//!
//! Built on axum over tokio: the most used async HTTP stack in Rust, maintained by the tokio
//! project, with request-size limits and graceful shutdown built in.

mod guard;

use super::args::{Cli, Command, ServeArgs};
use super::names::OptionNames;
use super::output::{Failure, UsageError};
use axum::Router;
use axum::body::Bytes;
use axum::extract::{DefaultBodyLimit, Query, Request, State};
use axum::http::{HeaderMap, HeaderValue, StatusCode, header};
use axum::middleware::{self, Next};
use axum::response::{IntoResponse, Response};
use axum::routing::{get, post};
use clap::Parser;
use relyard::analysis::{Silent, run};
use relyard::output::json::{CheckDocument, PoolDocument};
use relyard::output::prose::{benchmark_paragraph, placement_paragraph};
use std::sync::Arc;
use std::time::Duration;

/// The invented demo sheet, in the binary.
const DEMO_SHEET: &[u8] = include_bytes!("../../../datasets-demo/candor-benchmark.csv");
const DEMO_NAME: &str = "candor-benchmark.csv";
const DEMO_MEASURE: &str = "the Brindlewood Team Candor Inventory";

const PAGE: &str = include_str!("page/index.html");
const SCRIPT: &str = include_str!("page/app.js");
const STYLE: &str = include_str!("page/app.css");

/// Longest an analysis may run for one request.
const TIME_LIMIT: Duration = Duration::from_secs(300);

/// What every handler may read.
struct ServerState {
    port: u16,
    token: String,
    demo: bool,
}

pub fn run_serve(a: ServeArgs) -> Result<(), Failure> {
    let limit = guard::parse_size(&a.max_upload).map_err(|m| Failure::Usage(UsageError(m)))?;
    let runtime = tokio::runtime::Builder::new_multi_thread()
        .worker_threads(2)
        .enable_all()
        .build()
        .map_err(|e| Failure::Lib(relyard::error::Error::io("starting the server", e)))?;
    runtime.block_on(serve(a, limit))
}

async fn serve(a: ServeArgs, limit: u64) -> Result<(), Failure> {
    let io = |what: &str, e: std::io::Error| Failure::Lib(relyard::error::Error::io(what, e));
    let listener = tokio::net::TcpListener::bind(("127.0.0.1", a.port.unwrap_or(0)))
        .await
        .map_err(|e| io("opening the server's port on 127.0.0.1", e))?;
    let port = listener
        .local_addr()
        .map_err(|e| io("reading the server's address", e))?
        .port();
    let token = guard::new_token().map_err(|e| io("drawing the launch token", e))?;
    let address = format!("http://127.0.0.1:{port}/open?token={token}");
    let state = Arc::new(ServerState {
        port,
        token,
        demo: a.demo,
    });
    let app = Router::new()
        .route("/", get(page))
        .route("/open", get(open))
        .route("/app.js", get(script))
        .route("/app.css", get(style))
        .route("/api/start", get(start))
        .route("/api/pool", post(pool))
        .route("/api/check", post(check))
        .layer(DefaultBodyLimit::max(
            usize::try_from(limit).unwrap_or(usize::MAX),
        ))
        .layer(middleware::from_fn_with_state(state.clone(), checked))
        .with_state(state);
    println!("relyard: the browser interface is at {address}");
    println!("relyard: only this machine can reach it; press Ctrl-C to stop");
    if a.open {
        open_browser(&address);
    }
    axum::serve(listener, app)
        .with_graceful_shutdown(async {
            let _ = tokio::signal::ctrl_c().await;
        })
        .await
        .map_err(|e| io("serving", e))?;
    println!("relyard: stopped");
    Ok(())
}

/// Refuse a request that does not come from this server's own page; add the headers that
/// keep the page to itself.
async fn checked(State(st): State<Arc<ServerState>>, req: Request, next: Next) -> Response {
    let headers = req.headers();
    let text = |name: header::HeaderName| headers.get(name).and_then(|v| v.to_str().ok());
    if !guard::host_allowed(text(header::HOST), st.port) {
        return refuse("this server answers only requests addressed to 127.0.0.1 or localhost");
    }
    if !guard::origin_allowed(text(header::ORIGIN), st.port) {
        return refuse("requests from other sites are refused");
    }
    if headers
        .get("sec-fetch-site")
        .is_some_and(|v| v.as_bytes() == b"cross-site")
    {
        return refuse("requests from other sites are refused");
    }
    if req.uri().path() != "/open" {
        let cookies = headers
            .get_all(header::COOKIE)
            .iter()
            .filter_map(|v| v.to_str().ok());
        let ok = guard::session_token(cookies).is_some_and(|t| guard::same_token(t, &st.token));
        if !ok {
            return refuse(
                "no valid session: open the address relyard printed when it started (it \
                 carries a one-time token)",
            );
        }
    }
    let mut response = next.run(req).await;
    let h = response.headers_mut();
    for (name, value) in [
        (
            "content-security-policy",
            "default-src 'self'; img-src 'self' data:; object-src 'none'; \
             frame-ancestors 'none'; base-uri 'none'; form-action 'self'",
        ),
        ("x-content-type-options", "nosniff"),
        ("referrer-policy", "no-referrer"),
        ("cache-control", "no-store"),
        ("x-frame-options", "DENY"),
    ] {
        h.insert(name, HeaderValue::from_static(value));
    }
    response
}

fn refuse(why: &str) -> Response {
    (StatusCode::FORBIDDEN, format!("relyard: refused: {why}\n")).into_response()
}

/// The token URL: set the session cookie and go to the page.
async fn open(
    State(st): State<Arc<ServerState>>,
    Query(q): Query<Vec<(String, String)>>,
) -> Response {
    let given = q
        .iter()
        .find(|(k, _)| k == "token")
        .map(|(_, v)| v.as_str());
    if !given.is_some_and(|t| guard::same_token(t, &st.token)) {
        return refuse("the token in the address is not this server's");
    }
    let cookie = format!(
        "{}={}; HttpOnly; SameSite=Strict; Path=/",
        guard::COOKIE,
        st.token
    );
    let mut h = HeaderMap::new();
    h.insert(header::LOCATION, HeaderValue::from_static("/"));
    if let Ok(v) = HeaderValue::from_str(&cookie) {
        h.insert(header::SET_COOKIE, v);
    }
    (StatusCode::SEE_OTHER, h).into_response()
}

async fn page() -> Response {
    ([(header::CONTENT_TYPE, "text/html; charset=utf-8")], PAGE).into_response()
}

async fn script() -> Response {
    (
        [(header::CONTENT_TYPE, "text/javascript; charset=utf-8")],
        SCRIPT,
    )
        .into_response()
}

async fn style() -> Response {
    ([(header::CONTENT_TYPE, "text/css; charset=utf-8")], STYLE).into_response()
}

/// What the page starts with.
async fn start(State(st): State<Arc<ServerState>>) -> Response {
    json_response(
        StatusCode::OK,
        &serde_json::json!({
            "demo": st.demo,
            "demo_name": DEMO_NAME,
            "version": env!("CARGO_PKG_VERSION"),
        }),
    )
}

fn json_response(status: StatusCode, value: &serde_json::Value) -> Response {
    (
        status,
        [(header::CONTENT_TYPE, "application/json")],
        value.to_string(),
    )
        .into_response()
}

fn error_response(status: StatusCode, message: &str) -> Response {
    json_response(status, &serde_json::json!({ "error": message }))
}

/// Pool an uploaded sheet (the request's body) or the demo sheet (`demo=1`) with the
/// settings in the query; answer the document `relyard pool --json` prints, with the
/// figures.
async fn pool(Query(q): Query<Vec<(String, String)>>, body: Bytes) -> Response {
    analyse(Kind::Pool, q, body).await
}

/// Place a new study (its coefficient, n and the rest in the query) against the benchmark
/// of the uploaded or demo sheet: the document of `relyard check --json`, with the
/// placement figure.
async fn check(Query(q): Query<Vec<(String, String)>>, body: Bytes) -> Response {
    analyse(Kind::Check, q, body).await
}

/// Which command a request runs.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Kind {
    Pool,
    Check,
}

async fn analyse(kind: Kind, q: Vec<(String, String)>, body: Bytes) -> Response {
    let demo = q.iter().any(|(k, v)| k == "demo" && v == "1");
    let (name, bytes) = if demo {
        (DEMO_NAME.to_string(), DEMO_SHEET.to_vec())
    } else {
        let name = q
            .iter()
            .find(|(k, _)| k == "name")
            .map(|(_, v)| display_name(v))
            .unwrap_or_else(|| "upload.csv".into());
        (name, body.to_vec())
    };
    if bytes.is_empty() {
        return error_response(StatusCode::BAD_REQUEST, "the upload is empty");
    }
    let args = match arguments(kind, &q, &name, demo) {
        Ok(a) => a,
        Err(m) => return error_response(StatusCode::BAD_REQUEST, &m),
    };
    let job = tokio::task::spawn_blocking(move || analysed(kind, args, bytes));
    match tokio::time::timeout(TIME_LIMIT, job).await {
        Err(_) => error_response(
            StatusCode::SERVICE_UNAVAILABLE,
            "the analysis took longer than the server's time limit",
        ),
        Ok(Err(_)) => error_response(
            StatusCode::INTERNAL_SERVER_ERROR,
            "the analysis failed unexpectedly; the server keeps running",
        ),
        Ok(Ok(Ok(doc))) => json_response(StatusCode::OK, &doc),
        Ok(Ok(Err(message))) => error_response(StatusCode::BAD_REQUEST, &message),
    }
}

/// A file name for messages: the last part of what the page sent, never a path.
fn display_name(given: &str) -> String {
    let last = given.rsplit(['/', '\\']).next().unwrap_or("").trim();
    let clean: String = last.chars().filter(|c| !c.is_control()).take(200).collect();
    if clean.is_empty() {
        "upload.csv".into()
    } else {
        clean
    }
}

/// The settings the page may send, as options of the command line (no option that names
/// a file is among them): the model's for every request, the new study's for `check`.
const VALUE_SETTINGS: [(&str, &str); 11] = [
    ("transform", "--transform"),
    ("tau2", "--tau2"),
    ("ci", "--ci"),
    ("level", "--level"),
    ("dependence", "--dependence"),
    ("sampling_correlation", "--sampling-correlation"),
    ("inference", "--inference"),
    ("worksheet", "--worksheet"),
    ("delimiter", "--delimiter"),
    ("measure", "--measure"),
    ("column", "--column"),
];
const STUDY_SETTINGS: [(&str, &str); 9] = [
    ("coef", "--coef"),
    ("n", "--n"),
    ("items", "--items"),
    ("coef_type", "--coef-type"),
    ("sd", "--sd"),
    ("sd_metric", "--sd-metric"),
    ("scale_min", "--scale-min"),
    ("scale_max", "--scale-max"),
    ("at", "--at"),
];
const FLAG_SETTINGS: [(&str, &str); 2] = [
    ("skip_invalid", "--skip-invalid"),
    ("allow_mixed_types", "--allow-mixed-types"),
];

/// The command line of `relyard pool` or `relyard check` for the page's settings.
fn arguments(
    kind: Kind,
    q: &[(String, String)],
    name: &str,
    demo: bool,
) -> Result<Vec<String>, String> {
    let command = match kind {
        Kind::Pool => "pool",
        Kind::Check => "check",
    };
    let mut args = vec!["relyard".to_string(), command.to_string()];
    let mut measure = false;
    let study: &[(&str, &str)] = match kind {
        Kind::Pool => &[],
        Kind::Check => &STUDY_SETTINGS,
    };
    for (key, value) in q {
        if key == "name" || key == "demo" {
            continue;
        }
        let value_option = VALUE_SETTINGS.iter().chain(study).find(|(k, _)| k == key);
        if let Some((_, option)) = value_option {
            measure |= key == "measure";
            args.push(format!("{option}={value}"));
        } else if let Some((_, option)) = FLAG_SETTINGS.iter().find(|(k, _)| k == key) {
            if value == "1" || value == "true" {
                args.push((*option).to_string());
            }
        } else {
            return Err(format!("unknown setting \"{}\"", display_name(key)));
        }
    }
    if demo && !measure {
        args.push(format!("--measure={DEMO_MEASURE}"));
    }
    args.push("--json".into());
    args.push("--".into());
    args.push(name.to_string());
    Ok(args)
}

/// Run the analysis on the uploaded bytes: the JSON document with its figures, or the
/// message the command line would print.
fn analysed(kind: Kind, args: Vec<String>, bytes: Vec<u8>) -> Result<serde_json::Value, String> {
    let message = |f: Failure| match f {
        Failure::Usage(u) => u.0,
        Failure::Lib(e) => e.render(&OptionNames),
        Failure::ClosedPipe => "the connection closed".into(),
    };
    let command = Cli::try_parse_from(&args).map_err(|e| e.to_string())?;
    let mut settings = match command.command {
        Command::Pool(a) => super::config::pool(a),
        Command::Check(a) => super::config::check(a),
        _ => return Err("not an analysis request".into()),
    }
    .map_err(message)?;
    if let Some(sheet) = settings.sheet.as_mut() {
        sheet.bytes = Some(Arc::new(bytes));
    }
    let analysis = run(&settings, &Silent).map_err(|e| message(Failure::Lib(e)))?;
    let measure = settings.measure.as_deref();
    // The figures as SVG text: the page shows them as images (an SVG in an image runs no
    // script, whatever its labels hold).
    let svg = |f: relyard::plot::Figure| f.svg().map_err(|e| message(Failure::Lib(e)));
    let missing = || "the analysis gave no result".to_string();
    match kind {
        Kind::Pool => {
            let b = analysis.benchmark.as_ref().ok_or_else(missing)?;
            let paragraph = benchmark_paragraph(b, measure);
            let mut doc = serde_json::to_value(PoolDocument::new(b, &paragraph, &OptionNames))
                .map_err(|e| e.to_string())?;
            doc["figures"] = serde_json::json!({
                "forest": svg(relyard::output::figures::forest(b))?,
                "precision": svg(relyard::output::figures::funnel(b))?,
            });
            Ok(doc)
        }
        Kind::Check => {
            let p = analysis.prepared.as_ref().ok_or_else(missing)?;
            let pl = analysis.placement.as_ref().ok_or_else(missing)?;
            let paragraph = placement_paragraph(pl, measure);
            let mut doc = serde_json::to_value(CheckDocument::new(p, pl, &paragraph, &OptionNames))
                .map_err(|e| e.to_string())?;
            doc["figures"] = serde_json::json!({
                "placement": svg(relyard::output::figures::placement(pl))?,
            });
            Ok(doc)
        }
    }
}

/// Ask the desktop to open the address; say so when it cannot.
fn open_browser(address: &str) {
    let tried = if cfg!(target_os = "macos") {
        std::process::Command::new("open").arg(address).spawn()
    } else if cfg!(target_os = "windows") {
        std::process::Command::new("cmd")
            .args(["/C", "start", "", address])
            .spawn()
    } else {
        std::process::Command::new("xdg-open").arg(address).spawn()
    };
    if tried.is_err() {
        eprintln!("relyard: could not open a browser; open the address above yourself");
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn q(pairs: &[(&str, &str)]) -> Vec<(String, String)> {
        pairs
            .iter()
            .map(|(k, v)| (k.to_string(), v.to_string()))
            .collect()
    }

    #[test]
    fn the_page_settings_become_pool_options_and_nothing_else() {
        let args = arguments(
            Kind::Pool,
            &q(&[("tau2", "dl"), ("skip_invalid", "1")]),
            "s.csv",
            false,
        )
        .unwrap();
        assert_eq!(
            args,
            [
                "relyard",
                "pool",
                "--tau2=dl",
                "--skip-invalid",
                "--json",
                "--",
                "s.csv"
            ]
        );
        assert!(arguments(Kind::Pool, &q(&[("output", "/etc/passwd")]), "s.csv", false).is_err());
        // The new study's settings belong to check only.
        assert!(arguments(Kind::Pool, &q(&[("coef", "0.7")]), "s.csv", false).is_err());
        let args = arguments(
            Kind::Check,
            &q(&[("coef", "0.7"), ("n", "90")]),
            "s.csv",
            true,
        );
        assert!(args.unwrap().starts_with(&[
            "relyard".into(),
            "check".into(),
            "--coef=0.7".into()
        ]));
        // A value that looks like an option stays a value.
        let args = arguments(Kind::Pool, &q(&[("measure", "--json")]), "s.csv", false).unwrap();
        assert!(args.contains(&"--measure=--json".to_string()));
    }

    #[test]
    fn a_sent_name_is_never_a_path() {
        assert_eq!(display_name("/etc/passwd"), "passwd");
        assert_eq!(display_name("C:\\data\\sheet.xlsx"), "sheet.xlsx");
        assert_eq!(display_name("../"), "upload.csv");
        assert_eq!(display_name("a\u{7}b.csv"), "ab.csv");
    }
}
