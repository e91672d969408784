//! `relyard serve`: the browser face. A web server on 127.0.0.1 that serves one page (held
//! in the binary: no request leaves the machine) and answers its requests with the same
//! analysis layer as the command line. Uploads stay in memory; no path sent by the page is
//! ever opened; every request must carry the launch token and name this server as its host
//! and origin (see `guard`).
//!
//! Built on axum over tokio: the most used async HTTP stack in Rust, maintained by the tokio
//! project, with request-size limits and graceful shutdown built in.

mod guard;
mod jobs;
mod requests;
mod wording;

use super::args::ServeArgs;
use super::output::{Failure, UsageError};
use axum::Router;
use axum::body::Bytes;
use axum::extract::{DefaultBodyLimit, Query, Request, State};
use axum::http::{HeaderMap, HeaderValue, StatusCode, header};
use axum::middleware::{self, Next};
use axum::response::{IntoResponse, Response};
use axum::routing::{get, post};
use jobs::Jobs;
use requests::{
    Answer, DEMO_ITEMS_NAME, DEMO_NAME, DEMO_STUDY_NAME, Kind, Upload, analysed, arguments,
    display_name, report_command,
};
use std::sync::Arc;
use std::time::Duration;

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
    jobs: Arc<Jobs>,
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
        jobs: Arc::new(Jobs::default()),
    });
    let app = Router::new()
        .route("/", get(page))
        .route("/open", get(open))
        .route("/app.js", get(script))
        .route("/app.css", get(style))
        .route("/api/start", get(start))
        // Each answers what its command prints with --json (and the figures), or for the
        // report its files in one zip: pool (the benchmark), check (a new study placed),
        // explain (moderators, score spread, subgroups, influence), items (alpha, omega),
        // correct (a corrected correlation), correct-with-benchmark (the benchmark as the
        // measure's reliability, as the report corrects), correct-regression (a
        // regression's slopes, from raw data or a summary), report (the report's zip).
        .route("/api/pool", post(|st, q, b| handle(Kind::Pool, st, q, b)))
        .route("/api/check", post(|st, q, b| handle(Kind::Check, st, q, b)))
        .route(
            "/api/explain",
            post(|st, q, b| handle(Kind::Explain, st, q, b)),
        )
        .route("/api/items", post(|st, q, b| handle(Kind::Items, st, q, b)))
        .route("/api/icc", post(|st, q, b| handle(Kind::Icc, st, q, b)))
        .route(
            "/api/correct",
            post(|st, q, b| handle(Kind::Correct, st, q, b)),
        )
        .route(
            "/api/correct-with-benchmark",
            post(|st, q, b| handle(Kind::CorrectWithBenchmark, st, q, b)),
        )
        .route(
            "/api/report",
            post(|st, q, b| handle(Kind::Report, st, q, b)),
        )
        .route(
            "/api/correct-regression",
            post(|st, q, b| handle(Kind::CorrectRegression, st, q, b)),
        )
        .route("/api/report-command", post(command))
        .route("/api/progress", get(progress))
        .route("/api/stop", post(stop))
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
            "demo_items_name": DEMO_ITEMS_NAME,
            "demo_study_name": DEMO_STUDY_NAME,
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

type Sent = (State<Arc<ServerState>>, Query<Vec<(String, String)>>, Bytes);

/// The handler of the requests of one kind: the upload (the body, or the demo's file with
/// `demo=1`) analysed with the settings in the query.
async fn handle(
    kind: Kind,
    state: State<Arc<ServerState>>,
    q: Query<Vec<(String, String)>>,
    body: Bytes,
) -> Response {
    analyse(kind, (state, q, body)).await
}

/// The `relyard report` command that reproduces the report of these settings.
async fn command(Query(q): Query<Vec<(String, String)>>) -> Response {
    let (name, demo) = upload_name(Upload::Sheet, &q);
    match arguments(Kind::Report, &q, &name, demo) {
        Ok(args) => json_response(
            StatusCode::OK,
            &serde_json::json!({ "command": report_command(&args) }),
        ),
        Err(m) => error_response(StatusCode::BAD_REQUEST, &m),
    }
}

/// How far a running job has got; `running` is false for a job that has not begun or has
/// ended (the page polls from before its request reaches the server until after it ends).
async fn progress(
    State(st): State<Arc<ServerState>>,
    Query(q): Query<Vec<(String, String)>>,
) -> Response {
    let Some(w) = job_of(&q).and_then(|id| st.jobs.get(id)) else {
        return json_response(StatusCode::OK, &serde_json::json!({ "running": false }));
    };
    let (task, done, total) = w.state();
    json_response(
        StatusCode::OK,
        &serde_json::json!({
            "running": true,
            "task": task.map(|t| t.name()),
            "done": done,
            "total": total,
        }),
    )
}

/// Ask a running job to stop (its request then answers that it was stopped); `stopping`
/// is false when no such job is running (it may just have ended).
async fn stop(
    State(st): State<Arc<ServerState>>,
    Query(q): Query<Vec<(String, String)>>,
) -> Response {
    let running = job_of(&q).and_then(|id| st.jobs.get(id));
    if let Some(w) = &running {
        w.ask_to_stop();
    }
    json_response(
        StatusCode::OK,
        &serde_json::json!({ "stopping": running.is_some() }),
    )
}

fn job_of(q: &[(String, String)]) -> Option<&str> {
    q.iter().find(|(k, _)| k == "job").map(|(_, v)| v.as_str())
}

/// The name of the upload for messages, and whether the demo's file stands in for it.
fn upload_name(upload: Upload, q: &[(String, String)]) -> (String, bool) {
    let demo = q.iter().any(|(k, v)| k == "demo" && v == "1");
    let name = match demo {
        true => upload.demo().0.to_string(),
        false => q
            .iter()
            .find(|(k, _)| k == "name")
            .map(|(_, v)| display_name(v))
            .unwrap_or_else(|| "upload.csv".into()),
    };
    (name, demo)
}

async fn analyse(kind: Kind, (State(st), Query(q), body): Sent) -> Response {
    let upload = kind.upload();
    let (name, demo) = upload_name(upload, &q);
    let bytes = match (demo, upload) {
        (_, Upload::None) => Vec::new(),
        (true, _) => upload.demo().1.to_vec(),
        (false, _) => body.to_vec(),
    };
    if bytes.is_empty() && upload != Upload::None {
        return error_response(StatusCode::BAD_REQUEST, "the upload is empty");
    }
    let args = match arguments(kind, &q, &name, demo) {
        Ok(a) => a,
        Err(m) => return error_response(StatusCode::BAD_REQUEST, &m),
    };
    // Dropped when this request ends, answered or not: the analysis is then asked to stop.
    let watched = match st.jobs.watch(job_of(&q)) {
        Ok(w) => w,
        Err(m) => return error_response(StatusCode::CONFLICT, &m),
    };
    let watch = watched.watch.clone();
    let job = tokio::task::spawn_blocking(move || analysed(kind, args, bytes, &*watch));
    let answer = tokio::time::timeout(TIME_LIMIT, job).await;
    drop(watched);
    match answer {
        Err(_) => error_response(
            StatusCode::SERVICE_UNAVAILABLE,
            "the analysis took longer than the server's time limit",
        ),
        Ok(Err(_)) => error_response(
            StatusCode::INTERNAL_SERVER_ERROR,
            "the analysis failed unexpectedly; the server keeps running",
        ),
        Ok(Ok(Ok(Answer::Document(doc)))) => json_response(StatusCode::OK, &doc),
        Ok(Ok(Ok(Answer::Zip(bytes)))) => (
            StatusCode::OK,
            [
                (header::CONTENT_TYPE, "application/zip"),
                (
                    header::CONTENT_DISPOSITION,
                    "attachment; filename=\"relyard-report.zip\"",
                ),
            ],
            bytes,
        )
            .into_response(),
        Ok(Ok(Err(message))) => error_response(StatusCode::BAD_REQUEST, &message),
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
