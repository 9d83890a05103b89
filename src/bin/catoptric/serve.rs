//! `catoptric serve`: a small static file server for the browser workbench.
//!
//! It binds 127.0.0.1 only, answers GET and HEAD, and serves nothing
//! outside its root folder: every request path goes through
//! [`resolve`], which refuses traversal and encoded separators before the
//! file system is touched and then checks the canonical path (symlinks
//! resolved) against the canonical root.

use crate::Failure;
use clap::Args;
use std::io::{Read as _, Write as _};
use std::net::{TcpListener, TcpStream};
use std::path::{Path, PathBuf};
use std::sync::Arc;
use std::time::Duration;

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
}

/// Content-Security-Policy sent with every response.
pub const CSP: &str = "default-src 'self'; script-src 'self' 'wasm-unsafe-eval'; style-src 'self'; \
img-src 'self' data: blob:; connect-src 'self'; worker-src 'self' blob:; object-src 'none'; \
base-uri 'none'; frame-ancestors 'none'";

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
        Some("wasm") => "application/wasm",
        Some("svg") => "image/svg+xml",
        Some("png") => "image/png",
        Some("ico") => "image/x-icon",
        Some("txt" | "md") => "text/plain; charset=utf-8",
        Some("csv") => "text/csv; charset=utf-8",
        _ => "application/octet-stream",
    }
}

/// Most connections served at once.
const MAX_CONNECTIONS: usize = 64;
/// Longest request head accepted, bytes.
const MAX_HEAD: usize = 16 * 1024;
/// Read and write timeout of a connection.
const IO_TIMEOUT: Duration = Duration::from_secs(10);

/// Headers sent with every response. Every connection carries one request:
/// the page loads a few dozen small files from loopback, where a fresh
/// connection costs nothing, and no thread ever waits on an idle kept-alive
/// socket (a pooled server did, and Chromium stalled on module loads).
fn common_headers() -> String {
    format!(
        "Content-Security-Policy: {CSP}\r\nX-Content-Type-Options: nosniff\r\nCache-Control: no-cache\r\nConnection: close\r\n"
    )
}

/// Reads the raw request head (up to the blank line); `None` when the
/// client went away, sent too much or timed out.
fn read_head(stream: &mut TcpStream) -> Option<Vec<u8>> {
    let mut head = Vec::with_capacity(1024);
    let mut buf = [0u8; 2048];
    while !head.windows(4).any(|w| w == b"\r\n\r\n") {
        let n = stream.read(&mut buf).ok().filter(|&n| n > 0)?;
        head.extend_from_slice(&buf[..n]);
        if head.len() > MAX_HEAD {
            return None;
        }
    }
    Some(head)
}

/// Answers one request on `stream` and closes it.
fn answer(root: &Path, mut stream: TcpStream) {
    let _ = stream.set_read_timeout(Some(IO_TIMEOUT));
    let _ = stream.set_write_timeout(Some(IO_TIMEOUT));
    let Some(head) = read_head(&mut stream) else {
        return;
    };
    // The request line and headers are parsed by httparse (hyper's parser).
    let mut headers = [httparse::EMPTY_HEADER; 64];
    let mut req = httparse::Request::new(&mut headers);
    let (method, target) = match req.parse(&head) {
        Ok(httparse::Status::Complete(_)) => (req.method.unwrap_or(""), req.path.unwrap_or("")),
        _ => ("", ""),
    };
    if method.is_empty() {
        let body = "bad request\n";
        let r = format!(
            "HTTP/1.1 400 Bad Request\r\nContent-Type: text/plain; charset=utf-8\r\nContent-Length: {}\r\n{}\r\n{body}",
            body.len(),
            common_headers()
        );
        let _ = stream.write_all(r.as_bytes());
        return;
    }
    let text = |status: u16, reason: &str, body: &str, extra: &str| {
        format!(
            "HTTP/1.1 {status} {reason}\r\nContent-Type: text/plain; charset=utf-8\r\nContent-Length: {}\r\n{extra}{}\r\n{body}",
            body.len(),
            common_headers()
        )
    };
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
                let mut r = text(why.status(), reason, body, "");
                if method == "HEAD" {
                    r.truncate(r.len() - body.len());
                }
                stream.write_all(r.as_bytes())
            }
        },
        _ => stream.write_all(text(405, "Method Not Allowed", "method not allowed\n", "Allow: GET, HEAD\r\n").as_bytes()),
    };
    let _ = stream.flush();
    // Close our side, then let the client close: dropping a socket with
    // unread input would reset the connection and could cut the reply.
    let _ = stream.shutdown(std::net::Shutdown::Write);
    let _ = stream.set_read_timeout(Some(Duration::from_secs(1)));
    let mut sink = [0u8; 512];
    while matches!(stream.read(&mut sink), Ok(n) if n > 0) {}
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
        Some(path) => Some(catoptric::layout::encode_link(&crate::commands::read_layout(path)?)),
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
    // MAX_CONNECTIONS at once (further clients are closed at once).
    let root = Arc::new(root);
    let open = Arc::new(std::sync::atomic::AtomicUsize::new(0));
    for stream in listener.incoming() {
        let Ok(stream) = stream else { continue };
        use std::sync::atomic::Ordering::SeqCst;
        if open.fetch_add(1, SeqCst) >= MAX_CONNECTIONS {
            open.fetch_sub(1, SeqCst);
            continue;
        }
        let (root, count) = (Arc::clone(&root), Arc::clone(&open));
        let spawned = std::thread::Builder::new().name("serve".into()).spawn(move || {
            answer(&root, stream);
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
        assert_eq!(content_type(Path::new("noext")), "application/octet-stream");
    }
}
