//! `catoptric serve`: a small static file server for the browser workbench.
//!
//! It binds 127.0.0.1 only, answers GET and HEAD, and serves nothing
//! outside its root folder: every request path goes through
//! [`resolve`], which refuses traversal and encoded separators before the
//! file system is touched and then checks the canonical path (symlinks
//! resolved) against the canonical root.

use crate::Failure;
use clap::Args;
use std::io::Write as _;
use std::path::{Path, PathBuf};
use std::sync::Arc;

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
}

/// Content-Security-Policy sent with every response.
pub const CSP: &str = "default-src 'self'; script-src 'self' 'wasm-unsafe-eval'; style-src 'self'; \
img-src 'self' data: blob:; connect-src 'self'; worker-src 'self' blob:; object-src 'none'; \
base-uri 'none'; frame-ancestors 'none'";

/// Request threads; the page loads a handful of files at once.
const WORKERS: usize = 4;

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

fn header(name: &str, value: &str) -> tiny_http::Header {
    tiny_http::Header::from_bytes(name.as_bytes(), value.as_bytes()).expect("static header text is ASCII")
}

fn common_headers() -> [tiny_http::Header; 4] {
    [
        header("Content-Security-Policy", CSP),
        header("X-Content-Type-Options", "nosniff"),
        header("Cache-Control", "no-cache"),
        // One request per connection: with kept-alive connections Chromium
        // sometimes waited for ever on a module script from tiny_http. On
        // loopback a fresh connection per file costs nothing noticeable.
        header("Connection", "close"),
    ]
}

fn with_common<R: std::io::Read>(mut r: tiny_http::Response<R>) -> tiny_http::Response<R> {
    for h in common_headers() {
        r.add_header(h);
    }
    r
}

fn answer(root: &Path, req: tiny_http::Request) {
    use tiny_http::{Method, Response};
    // A failed write means the client went away; nothing to do about it.
    let _ = match req.method() {
        Method::Get | Method::Head => match resolve(root, req.url()).and_then(|p| {
            std::fs::File::open(&p).map(|f| (p, f)).map_err(|_| Refusal::NotFound)
        }) {
            Ok((path, file)) => {
                let r = Response::from_file(file).with_header(header("Content-Type", content_type(&path)));
                req.respond(with_common(r))
            }
            Err(why) => {
                let text = if why == Refusal::NotFound { "not found\n" } else { "bad request\n" };
                let r = Response::from_string(text)
                    .with_status_code(why.status())
                    .with_header(header("Content-Type", "text/plain; charset=utf-8"));
                req.respond(with_common(r))
            }
        },
        _ => {
            let r = Response::from_string("method not allowed\n")
                .with_status_code(405)
                .with_header(header("Allow", "GET, HEAD"))
                .with_header(header("Content-Type", "text/plain; charset=utf-8"));
            req.respond(with_common(r))
        }
    };
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
    let server = tiny_http::Server::http(("127.0.0.1", a.port))
        .map_err(|e| Failure { code: 1, message: format!("cannot listen on 127.0.0.1:{}: {e}", a.port) })?;
    let port = server.server_addr().to_ip().map(|s| s.port()).unwrap_or(a.port);
    let mut out = std::io::stdout().lock();
    let _ = writeln!(out, "serving {} at http://127.0.0.1:{port}/", root.display());
    if let Some(f) = &fragment {
        let _ = writeln!(out, "open http://127.0.0.1:{port}/{f}");
    }
    let _ = writeln!(out, "press Ctrl-C to stop");
    let _ = out.flush();
    drop(out);

    let server = Arc::new(server);
    let root = Arc::new(root);
    let workers: Vec<_> = (0..WORKERS)
        .map(|_| {
            let (server, root) = (Arc::clone(&server), Arc::clone(&root));
            std::thread::spawn(move || {
                for req in server.incoming_requests() {
                    answer(&root, req);
                }
            })
        })
        .collect();
    for w in workers {
        let _ = w.join();
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
