//! `catoptric serve`: a small static file server for the browser workbench.
//!
//! It binds 127.0.0.1 only, answers GET and HEAD, and serves nothing
//! outside its root folder: every request path goes through
//! [`resolve`], which refuses traversal and encoded separators before the
//! file system is touched and then checks the canonical path (symlinks
//! resolved) against the canonical root.
//!
//! Hardening (common practice for servers on loopback): the request head
//! must arrive whole within one deadline, whatever the pace of the bytes;
//! heads over the size cap get 431 (RFC 6585 §5); a bare LF ends lines as
//! well as CRLF (RFC 9112 §2.2); the Host header must name this server on
//! loopback (127.0.0.1, localhost or [::1] with its port), else 421 (RFC
//! 9110 §15.5.20) or 400 when missing or repeated (RFC 9112 §3.2), so a
//! page on another site cannot reach it by rebinding a DNS name; past the
//! connection cap clients get 503 (RFC 9110 §15.6.4); after the answer the
//! connection is closed, nothing more is read.

use crate::Failure;
use clap::Args;
use std::io::{Read as _, Write as _};
use std::net::{TcpListener, TcpStream};
use std::path::{Path, PathBuf};
use std::sync::Arc;
use std::time::{Duration, Instant};

#[derive(Args)]
pub struct ServeArgs {
    /// TCP port on 127.0.0.1 (0 picks a free one).
    #[arg(long, default_value_t = 8000)]
    pub port: u16,
    /// Layout file to open: its share link is printed with the address.
    #[arg(long, value_name = "LAYOUT")]
    pub open: Option<String>,
    /// Folder to serve (default: ./www, else the crate's www folder).
    #[arg(long, value_name = "DIR")]
    pub root: Option<String>,
    /// Print the address as one JSON line: {"url", "root", "open"}.
    #[arg(long)]
    pub json: bool,
    /// Milliseconds a client has to send its whole request head (tests
    /// shorten it).
    #[arg(long, hide = true, default_value_t = HEAD_DEADLINE_MS)]
    pub head_timeout_ms: u64,
}

/// Content-Security-Policy sent with every response. `worker-src 'self'`
/// admits the page's trace workers and its service worker (www/sw.js),
/// `manifest-src 'self'` its web app manifest.
pub const CSP: &str = "default-src 'self'; script-src 'self' 'wasm-unsafe-eval'; style-src 'self'; \
img-src 'self' data: blob:; connect-src 'self'; worker-src 'self' blob:; manifest-src 'self'; \
object-src 'none'; base-uri 'none'; frame-ancestors 'none'";

/// Why a request path was refused.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Refusal {
    /// Malformed or hostile path (traversal, encoded separators, NUL).
    BadRequest,
    /// Nothing to serve there (missing, hidden, or outside the root).
    NotFound,
}

impl Refusal {
    fn status(self) -> u16 {
        match self {
            Refusal::BadRequest => 400,
            Refusal::NotFound => 404,
        }
    }
}

fn hex(b: u8) -> Option<u8> {
    match b {
        b'0'..=b'9' => Some(b - b'0'),
        b'a'..=b'f' => Some(b - b'a' + 10),
        b'A'..=b'F' => Some(b - b'A' + 10),
        _ => None,
    }
}

/// Percent-decodes a URL path. Encoded `/` and `\` are refused (they would
/// hide a separator from the segment check), as is any malformed escape.
fn percent_decode(raw: &str) -> Result<Vec<u8>, Refusal> {
    let b = raw.as_bytes();
    let mut out = Vec::with_capacity(b.len());
    let mut i = 0;
    while i < b.len() {
        if b[i] == b'%' {
            let (Some(h), Some(l)) = (b.get(i + 1).copied().and_then(hex), b.get(i + 2).copied().and_then(hex))
            else {
                return Err(Refusal::BadRequest);
            };
            let c = h * 16 + l;
            if c == b'/' || c == b'\\' {
                return Err(Refusal::BadRequest);
            }
            out.push(c);
            i += 3;
        } else {
            out.push(b[i]);
            i += 1;
        }
    }
    Ok(out)
}

/// Maps a request target (`/a/b.js?x#y`) to a file under `root`, which
/// must already be canonical. `/` and folders map to their `index.html`.
pub fn resolve(root: &Path, target: &str) -> Result<PathBuf, Refusal> {
    let path = target.split(['?', '#']).next().unwrap_or("");
    if !path.starts_with('/') {
        return Err(Refusal::BadRequest);
    }
    let decoded = percent_decode(path)?;
    let text = String::from_utf8(decoded).map_err(|_| Refusal::BadRequest)?;
    if text.contains('\0') || text.contains('\\') {
        return Err(Refusal::BadRequest);
    }
    let mut rel = PathBuf::new();
    for seg in text.split('/').filter(|s| !s.is_empty()) {
        if seg == "." || seg == ".." {
            return Err(Refusal::BadRequest);
        }
        if seg.starts_with('.') || seg.contains(':') {
            return Err(Refusal::NotFound);
        }
        rel.push(seg);
    }
    let mut full = root.join(&rel);
    if rel.as_os_str().is_empty() || text.ends_with('/') {
        full.push("index.html");
    }
    let mut canon = full.canonicalize().map_err(|_| Refusal::NotFound)?;
    if canon.is_dir() {
        canon = canon.join("index.html").canonicalize().map_err(|_| Refusal::NotFound)?;
    }
    if !canon.starts_with(root) || !canon.is_file() {
        return Err(Refusal::NotFound);
    }
    Ok(canon)
}

/// Content type by file extension.
pub fn content_type(path: &Path) -> &'static str {
    let ext = path.extension().and_then(|e| e.to_str()).map(str::to_ascii_lowercase);
    match ext.as_deref() {
        Some("html" | "htm") => "text/html; charset=utf-8",
        Some("js" | "mjs") => "text/javascript; charset=utf-8",
        Some("css") => "text/css; charset=utf-8",
        Some("json" | "map") => "application/json",
        Some("webmanifest") => "application/manifest+json",
        Some("wasm") => "application/wasm",
        Some("svg") => "image/svg+xml",
        Some("png") => "image/png",
        Some("ico") => "image/x-icon",
        Some("txt" | "md") => "text/plain; charset=utf-8",
        Some("csv") => "text/csv; charset=utf-8",
        _ => "application/octet-stream",
    }
}

/// Most connections served at once; more get 503.
const MAX_CONNECTIONS: usize = 64;
/// Longest request head accepted, bytes; longer gets 431.
const MAX_HEAD: usize = 16 * 1024;
/// Time for the whole request head, ms (one deadline, not per read).
const HEAD_DEADLINE_MS: u64 = 10_000;
/// Write timeout of a connection.
const IO_TIMEOUT: Duration = Duration::from_secs(10);
/// Most bytes of pending input taken before a refusal is sent, so that
/// closing does not reset the connection under the reply.
const MAX_DISCARD: usize = 64 * 1024;

/// Headers sent with every response. Every connection carries one request:
/// the page loads a few dozen small files from loopback, where a fresh
/// connection costs nothing, and no thread ever waits on an idle kept-alive
/// socket (a pooled server did, and Chromium stalled on module loads).
fn common_headers() -> String {
    format!(
        "Content-Security-Policy: {CSP}\r\nX-Content-Type-Options: nosniff\r\nCache-Control: no-cache\r\nConnection: close\r\n"
    )
}

/// How reading a request head ended.
enum Head {
    /// The head, up to and including its empty line.
    Complete(Vec<u8>),
    TooLarge,
    TimedOut,
    /// The client closed or the connection failed: nothing to answer.
    Gone,
}

/// Where the head ends: after its first empty line, with CRLF or bare LF
/// line ends.
fn head_end(b: &[u8]) -> Option<usize> {
    b.iter().enumerate().find_map(|(i, &c)| match (c, b.get(i + 1..)) {
        (b'\n', Some([b'\n', ..])) => Some(i + 2),
        (b'\n', Some([b'\r', b'\n', ..])) => Some(i + 3),
        _ => None,
    })
}

/// Reads the request head; the whole head must arrive before `deadline`.
fn read_head(stream: &mut TcpStream, deadline: Instant) -> Head {
    let mut head = Vec::with_capacity(1024);
    let mut buf = [0u8; 2048];
    loop {
        if let Some(end) = head_end(&head) {
            return if end > MAX_HEAD { Head::TooLarge } else { Head::Complete(head) };
        }
        if head.len() > MAX_HEAD {
            return Head::TooLarge;
        }
        let left = deadline.saturating_duration_since(Instant::now());
        if left.is_zero() || stream.set_read_timeout(Some(left)).is_err() {
            return Head::TimedOut;
        }
        match stream.read(&mut buf) {
            Ok(0) => return Head::Gone,
            Ok(n) => head.extend_from_slice(&buf[..n]),
            Err(e) if e.kind() == std::io::ErrorKind::Interrupted => {}
            Err(e) if matches!(e.kind(), std::io::ErrorKind::WouldBlock | std::io::ErrorKind::TimedOut) => {
                return Head::TimedOut;
            }
            Err(_) => return Head::Gone,
        }
    }
}

/// A short plain-text response; `extra` holds more header lines.
fn text_reply(status: u16, reason: &str, body: &str, extra: &str) -> String {
    format!(
        "HTTP/1.1 {status} {reason}\r\nContent-Type: text/plain; charset=utf-8\r\nContent-Length: {}\r\n{extra}{}\r\n{body}",
        body.len(),
        common_headers()
    )
}

/// Takes (without waiting) what the client has already sent, up to
/// [`MAX_DISCARD`] bytes: closing a socket with unread input resets the
/// connection, which can destroy a refusal before the client reads it.
fn discard_pending(stream: &mut TcpStream) {
    if stream.set_nonblocking(true).is_err() {
        return;
    }
    let mut buf = [0u8; 4096];
    let mut taken = 0;
    while taken < MAX_DISCARD {
        match stream.read(&mut buf) {
            Ok(n) if n > 0 => taken += n,
            _ => break,
        }
    }
    let _ = stream.set_nonblocking(false);
}

/// Sends a refusal and closes the connection. Refusals are short: a
/// second is plenty to hand one to the kernel.
fn refuse(mut stream: TcpStream, reply: &str) {
    let _ = stream.set_write_timeout(Some(Duration::from_secs(1)));
    discard_pending(&mut stream);
    let _ = stream.write_all(reply.as_bytes());
    close(stream);
}

/// Ends a connection: no more reading once the answer is out.
fn close(mut stream: TcpStream) {
    let _ = stream.flush();
    let _ = stream.shutdown(std::net::Shutdown::Both);
}

/// True when a Host header value names this server: a loopback name and
/// this port (RFC 9110 §7.2; no port means 80, §4.2.1).
fn host_is_ours(value: &str, port: u16) -> bool {
    let value = value.trim();
    let (name, rest) = match value.strip_prefix('[') {
        Some(v6) => match v6.find(']') {
            Some(i) => (&value[..i + 2], &v6[i + 1..]),
            None => return false,
        },
        None => value.split_at(value.find(':').unwrap_or(value.len())),
    };
    let given = match rest.strip_prefix(':') {
        None if rest.is_empty() => Some(80),
        Some("") => Some(80),
        Some(p) if p.bytes().all(|b| b.is_ascii_digit()) => p.parse::<u16>().ok(),
        _ => None,
    };
    let loopback = ["127.0.0.1", "localhost", "[::1]"].iter().any(|n| name.eq_ignore_ascii_case(n));
    loopback && given == Some(port)
}

/// The Host check: `Err` carries the refusal.
fn check_host(headers: &[httparse::Header], port: u16) -> Result<(), String> {
    let mut hosts = headers.iter().filter(|h| h.name.eq_ignore_ascii_case("host"));
    let (Some(host), None) = (hosts.next(), hosts.next()) else {
        return Err(text_reply(400, "Bad Request", "bad request: exactly one Host header is required\n", ""));
    };
    match std::str::from_utf8(host.value) {
        Ok(v) if host_is_ours(v, port) => Ok(()),
        _ => Err(text_reply(
            421,
            "Misdirected Request",
            &format!("this server answers only for 127.0.0.1:{port}, localhost:{port} or [::1]:{port}\n"),
            "",
        )),
    }
}

/// Answers one request on `stream` and closes it.
fn answer(root: &Path, port: u16, head_timeout: Duration, mut stream: TcpStream) {
    let _ = stream.set_write_timeout(Some(IO_TIMEOUT));
    let head = match read_head(&mut stream, Instant::now() + head_timeout) {
        Head::Complete(head) => head,
        Head::Gone => return,
        Head::TimedOut => {
            return refuse(stream, &text_reply(408, "Request Timeout", "request timeout: the request head took too long\n", ""));
        }
        Head::TooLarge => {
            let body = format!("request head larger than {} KiB\n", MAX_HEAD / 1024);
            return refuse(stream, &text_reply(431, "Request Header Fields Too Large", &body, ""));
        }
    };
    // The request line and headers are parsed by httparse (hyper's parser).
    let mut headers = [httparse::EMPTY_HEADER; 64];
    let mut req = httparse::Request::new(&mut headers);
    let (method, target) = match req.parse(&head) {
        Ok(httparse::Status::Complete(_)) => (req.method.unwrap_or(""), req.path.unwrap_or("")),
        _ => ("", ""),
    };
    if method.is_empty() {
        return refuse(stream, &text_reply(400, "Bad Request", "bad request\n", ""));
    }
    if let Err(reply) = check_host(req.headers, port) {
        return refuse(stream, &reply);
    }
    // A failed write means the client went away; nothing to do about it.
    let _ = match method {
        "GET" | "HEAD" => match resolve(root, target)
            .and_then(|p| std::fs::File::open(&p).map(|f| (p, f)).map_err(|_| Refusal::NotFound))
        {
            Ok((path, mut file)) => {
                let len = file.metadata().map(|m| m.len()).unwrap_or(0);
                let head = format!(
                    "HTTP/1.1 200 OK\r\nContent-Type: {}\r\nContent-Length: {len}\r\n{}\r\n",
                    content_type(&path),
                    common_headers()
                );
                stream.write_all(head.as_bytes()).and_then(|_| {
                    if method == "GET" { std::io::copy(&mut file, &mut stream).map(|_| ()) } else { Ok(()) }
                })
            }
            Err(why) => {
                let (reason, body) = if why == Refusal::NotFound { ("Not Found", "not found\n") } else { ("Bad Request", "bad request\n") };
                let mut r = text_reply(why.status(), reason, body, "");
                if method == "HEAD" {
                    r.truncate(r.len() - body.len());
                }
                stream.write_all(r.as_bytes())
            }
        },
        _ => stream.write_all(text_reply(405, "Method Not Allowed", "method not allowed\n", "Allow: GET, HEAD\r\n").as_bytes()),
    };
    close(stream);
}

/// The folder to serve: `--root`, else `./www`, else the crate's `www`.
fn find_root(arg: Option<&str>) -> Result<PathBuf, Failure> {
    let pick = match arg {
        Some(dir) => PathBuf::from(dir),
        None => {
            let here = PathBuf::from("www");
            if here.is_dir() { here } else { Path::new(env!("CARGO_MANIFEST_DIR")).join("www") }
        }
    };
    let canon = pick
        .canonicalize()
        .map_err(|e| Failure::input(format!("--root: cannot open folder {}: {e}", pick.display())))?;
    if !canon.is_dir() {
        return Err(Failure::input(format!("--root: {} is not a folder", pick.display())));
    }
    Ok(canon)
}

pub fn run(a: ServeArgs) -> Result<String, Failure> {
    let root = find_root(a.root.as_deref())?;
    let fragment = match &a.open {
        Some(path) => {
            let layout = crate::commands::read_layout(path)?;
            let link = catoptric::layout::checked_link(&layout).map_err(|e| Failure::input(format!("--open: {path}: {e}")))?;
            Some(link)
        }
        None => None,
    };
    let listener = TcpListener::bind(("127.0.0.1", a.port))
        .map_err(|e| Failure { code: 1, message: format!("cannot listen on 127.0.0.1:{}: {e}", a.port) })?;
    let port = listener.local_addr().map(|s| s.port()).unwrap_or(a.port);
    let mut out = std::io::stdout().lock();
    let url = format!("http://127.0.0.1:{port}/");
    let open = fragment.as_ref().map(|f| format!("{url}{f}"));
    if a.json {
        let line = serde_json::json!({ "url": url, "root": root.display().to_string(), "open": open });
        let _ = writeln!(out, "{line}");
    } else {
        let _ = writeln!(out, "serving {} at {url}", root.display());
        if let Some(o) = &open {
            let _ = writeln!(out, "open {o}");
        }
        let _ = writeln!(out, "press Ctrl-C to stop");
    }
    let _ = out.flush();
    drop(out);

    // A thread per connection: loopback only, one request each, at most
    // MAX_CONNECTIONS at once (further clients get 503 at once).
    let root = Arc::new(root);
    let head_timeout = Duration::from_millis(a.head_timeout_ms.max(1));
    let open = Arc::new(std::sync::atomic::AtomicUsize::new(0));
    let busy = || text_reply(503, "Service Unavailable", "busy: too many connections at once; try again\n", "Retry-After: 1\r\n");
    for stream in listener.incoming() {
        let Ok(stream) = stream else { continue };
        use std::sync::atomic::Ordering::SeqCst;
        if open.fetch_add(1, SeqCst) >= MAX_CONNECTIONS {
            open.fetch_sub(1, SeqCst);
            refuse(stream, &busy());
            continue;
        }
        let (root, count) = (Arc::clone(&root), Arc::clone(&open));
        let spawned = std::thread::Builder::new().name("serve".into()).spawn(move || {
            answer(&root, port, head_timeout, stream);
            count.fetch_sub(1, SeqCst);
        });
        if spawned.is_err() {
            open.fetch_sub(1, SeqCst);
        }
    }
    Err(Failure { code: 1, message: "server stopped".into() })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn tree() -> (PathBuf, PathBuf) {
        let base = std::env::temp_dir().join(format!("catoptric-resolve-{}", std::process::id()));
        let root = base.join("www");
        std::fs::create_dir_all(root.join("pkg")).unwrap();
        std::fs::write(root.join("index.html"), "<!doctype html>").unwrap();
        std::fs::write(root.join("pkg/a.wasm"), b"\0asm").unwrap();
        std::fs::write(base.join("secret.txt"), "outside").unwrap();
        (base, root.canonicalize().unwrap())
    }

    // Expected behaviour is common practice for static file servers
    // (RFC 3986 §3.3 path segments; dot segments never leave the root).
    #[test]
    fn resolves_inside_and_refuses_outside() {
        let (base, root) = tree();
        assert_eq!(resolve(&root, "/").unwrap(), root.join("index.html"));
        assert_eq!(resolve(&root, "/index.html?x=1#y").unwrap(), root.join("index.html"));
        assert_eq!(resolve(&root, "/pkg/a.wasm").unwrap(), root.join("pkg/a.wasm"));
        assert_eq!(resolve(&root, "/pkg/%61.wasm").unwrap(), root.join("pkg/a.wasm"));
        for bad in ["/../secret.txt", "/%2e%2e/secret.txt", "/..%2fsecret.txt", "/..%5csecret.txt", "/pkg/../../secret.txt"] {
            assert_eq!(resolve(&root, bad), Err(Refusal::BadRequest), "{bad}");
        }
        for bad in ["/a%00b", "/%zz", "/%", "relative", "/..\\secret.txt", "/%ff"] {
            assert_eq!(resolve(&root, bad), Err(Refusal::BadRequest), "{bad}");
        }
        assert_eq!(resolve(&root, "/missing.js"), Err(Refusal::NotFound));
        assert_eq!(resolve(&root, "/.git/config"), Err(Refusal::NotFound));
        #[cfg(unix)]
        {
            let link = root.join("out.txt");
            let _ = std::fs::remove_file(&link);
            std::os::unix::fs::symlink(base.join("secret.txt"), &link).unwrap();
            assert_eq!(resolve(&root, "/out.txt"), Err(Refusal::NotFound));
        }
        let _ = std::fs::remove_dir_all(&base);
    }

    #[test]
    fn content_types_follow_the_extension() {
        // Media types as registered with IANA (application/wasm per the
        // WebAssembly Web API spec; text/javascript per RFC 9239).
        assert_eq!(content_type(Path::new("a.wasm")), "application/wasm");
        assert!(content_type(Path::new("a.mjs")).starts_with("text/javascript"));
        assert!(content_type(Path::new("a.JS")).starts_with("text/javascript"));
        assert!(content_type(Path::new("index.html")).starts_with("text/html"));
        assert_eq!(content_type(Path::new("x.svg")), "image/svg+xml");
        // Web App Manifest (W3C), §"Media type registration".
        assert_eq!(content_type(Path::new("manifest.webmanifest")), "application/manifest+json");
        assert_eq!(content_type(Path::new("noext")), "application/octet-stream");
    }
}
