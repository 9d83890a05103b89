//! `catoptric serve` end to end: start the binary on a free loopback port
//! with a temporary root, speak raw HTTP/1.1 to it, and check content
//! types, security headers and that nothing outside the root is served.
//! Expected behaviour is common practice for static servers (RFC 9110
//! status codes; RFC 3986 dot segments never leave the root).

use std::io::{BufRead, BufReader, Read, Write};
use std::net::{SocketAddr, TcpStream};
use std::path::{Path, PathBuf};
use std::process::{Child, Command, Stdio};
use std::sync::mpsc;
use std::time::Duration;

const EXE: &str = env!("CARGO_BIN_EXE_catoptric");
const WAIT: Duration = Duration::from_secs(10);

/// The running server; killed when dropped, even if a check fails.
struct Server {
    child: Child,
    addr: SocketAddr,
    base: PathBuf,
}

impl Drop for Server {
    fn drop(&mut self) {
        let _ = self.child.kill();
        let _ = self.child.wait();
        let _ = std::fs::remove_dir_all(&self.base);
    }
}

fn write(path: &Path, bytes: &[u8]) {
    std::fs::create_dir_all(path.parent().unwrap()).unwrap();
    std::fs::write(path, bytes).unwrap();
}

/// The first few lines the child prints, read on a helper thread so the
/// test can wait with a timeout.
fn first_lines(child: &mut Child) -> mpsc::Receiver<String> {
    let stdout = child.stdout.take().unwrap();
    let (tx, rx) = mpsc::channel();
    std::thread::spawn(move || {
        let mut lines = BufReader::new(stdout).lines();
        for _ in 0..8 {
            let Some(Ok(l)) = lines.next() else { return };
            if tx.send(l).is_err() {
                return;
            }
        }
    });
    rx
}

fn start(tag: &str) -> Server {
    start_with(tag, &[])
}

/// [`start`] with more arguments for `serve`.
fn start_with(tag: &str, extra: &[&str]) -> Server {
    let base = std::env::temp_dir().join(format!("catoptric-serve-{tag}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&base);
    let www = base.join("www");
    write(&www.join("index.html"), b"<!doctype html><title>t</title>");
    write(&www.join("app.js"), b"export {};");
    write(&www.join("mod.mjs"), b"export {};");
    write(&www.join("style.css"), b"body{}");
    write(&www.join("pkg/core_bg.wasm"), b"\0asm\x01\0\0\0");
    write(&www.join("presets/a.json"), b"{}");
    write(&www.join("icon.svg"), b"<svg xmlns='http://www.w3.org/2000/svg'/>");
    write(&www.join("shot.png"), b"\x89PNG\r\n\x1a\n");
    write(&www.join("sw.js"), b"self.addEventListener('fetch', () => {});");
    write(&www.join("manifest.webmanifest"), b"{\"name\": \"t\"}");
    write(&www.join("sub/index.html"), b"<!doctype html><p>sub</p>");
    write(&base.join("Cargo.toml"), b"SECRET-OUTSIDE-ROOT");
    #[cfg(unix)]
    std::os::unix::fs::symlink(base.join("Cargo.toml"), www.join("leak.txt")).unwrap();

    let mut child = Command::new(EXE)
        .args(["serve", "--port", "0"])
        .args(extra)
        .arg("--root")
        .arg(&www)
        .stdout(Stdio::piped())
        .stderr(Stdio::null())
        .spawn()
        .expect("start catoptric serve");
    let rx = first_lines(&mut child);
    let mut server = Server { child, addr: "127.0.0.1:1".parse().unwrap(), base };
    let line = rx.recv_timeout(WAIT).expect("server printed its address");
    let port: u16 = line
        .split("http://127.0.0.1:")
        .nth(1)
        .and_then(|r| r.split('/').next())
        .and_then(|p| p.parse().ok())
        .unwrap_or_else(|| panic!("no address in {line:?}"));
    assert_ne!(port, 0, "the real port is printed, not 0");
    server.addr = SocketAddr::from(([127, 0, 0, 1], port));
    server
}

struct Reply {
    status: u16,
    headers: Vec<(String, String)>,
    body: Vec<u8>,
}

impl Reply {
    fn header(&self, name: &str) -> Option<&str> {
        self.headers.iter().find(|(k, _)| k.eq_ignore_ascii_case(name)).map(|(_, v)| v.as_str())
    }
}

fn request(s: &Server, method: &str, target: &str) -> Reply {
    let mut stream = TcpStream::connect_timeout(&s.addr, WAIT).expect("connect to loopback");
    stream.set_read_timeout(Some(WAIT)).unwrap();
    stream.set_write_timeout(Some(WAIT)).unwrap();
    let host = s.addr;
    write!(stream, "{method} {target} HTTP/1.1\r\nHost: {host}\r\nConnection: close\r\n\r\n").unwrap();
    let mut raw = Vec::new();
    stream.read_to_end(&mut raw).expect("read reply");
    parse_reply(&raw)
}

fn parse_reply(raw: &[u8]) -> Reply {
    let split = raw.windows(4).position(|w| w == b"\r\n\r\n").expect("end of headers");
    let head = String::from_utf8_lossy(&raw[..split]).to_string();
    let mut lines = head.split("\r\n");
    let status = lines.next().unwrap().split(' ').nth(1).unwrap().parse().unwrap();
    let headers = lines
        .filter_map(|l| l.split_once(':'))
        .map(|(k, v)| (k.trim().to_string(), v.trim().to_string()))
        .collect();
    Reply { status, headers, body: raw[split + 4..].to_vec() }
}

#[test]
fn serves_files_with_their_content_types_and_security_headers() {
    let s = start("types");
    let cases = [
        ("/", "text/html"),
        ("/index.html", "text/html"),
        ("/sub/", "text/html"),
        ("/app.js", "text/javascript"),
        ("/mod.mjs", "text/javascript"),
        ("/style.css", "text/css"),
        ("/pkg/core_bg.wasm", "application/wasm"),
        ("/presets/a.json", "application/json"),
        ("/icon.svg", "image/svg+xml"),
        ("/shot.png", "image/png"),
        // A service worker script must come with a JavaScript type (Service
        // Workers, W3C, "Update" algorithm), the manifest with its own
        // (Web App Manifest, W3C, media type registration).
        ("/sw.js", "text/javascript"),
        ("/manifest.webmanifest", "application/manifest+json"),
    ];
    for (path, ty) in cases {
        let r = request(&s, "GET", path);
        assert_eq!(r.status, 200, "{path}");
        assert!(r.header("Content-Type").unwrap_or("").starts_with(ty), "{path}: {:?}", r.header("Content-Type"));
        assert!(!r.body.is_empty(), "{path}");
        let csp = r.header("Content-Security-Policy").unwrap_or("");
        assert!(csp.contains("default-src 'self'"), "{path}: {csp}");
        assert!(csp.contains("'wasm-unsafe-eval'"), "{path}: {csp}");
        assert!(csp.contains("frame-ancestors 'none'"), "{path}: {csp}");
        // The service worker and the manifest are allowed from this origin.
        assert!(csp.contains("worker-src 'self'"), "{path}: {csp}");
        assert!(csp.contains("manifest-src 'self'"), "{path}: {csp}");
        assert_eq!(r.header("X-Content-Type-Options"), Some("nosniff"), "{path}");
        assert_eq!(r.header("Cache-Control"), Some("no-cache"), "{path}");
    }
    let r = request(&s, "GET", "/sub/");
    assert!(String::from_utf8_lossy(&r.body).contains("sub"));
}

#[test]
fn head_has_no_body_and_other_methods_are_refused() {
    let s = start("methods");
    let r = request(&s, "HEAD", "/app.js");
    assert_eq!(r.status, 200);
    assert!(r.body.is_empty());
    for m in ["POST", "PUT", "DELETE"] {
        let r = request(&s, m, "/app.js");
        assert_eq!(r.status, 405, "{m}");
        assert_eq!(r.header("Allow"), Some("GET, HEAD"));
    }
}

#[test]
fn nothing_outside_the_root_is_served() {
    let s = start("traversal");
    let attempts = [
        "/../Cargo.toml",
        "/%2e%2e/Cargo.toml",
        "/%2E%2E/Cargo.toml",
        "/..%2fCargo.toml",
        "/..%2FCargo.toml",
        "/..%5cCargo.toml",
        "/sub/../../Cargo.toml",
        "/./../Cargo.toml",
        "//../Cargo.toml",
        "/leak.txt",
        "/%00",
        "/index.html%00.js",
        "/%",
    ];
    for path in attempts {
        let r = request(&s, "GET", path);
        assert!(r.status == 400 || r.status == 404, "{path}: status {}", r.status);
        assert!(!String::from_utf8_lossy(&r.body).contains("SECRET"), "{path} leaked the outside file");
    }
    assert_eq!(request(&s, "GET", "/missing.js").status, 404);
    // Still alive after the hostile requests.
    assert_eq!(request(&s, "GET", "/").status, 200);
}

#[test]
fn open_with_a_bad_layout_fails_cleanly() {
    let out = Command::new(EXE)
        .args(["serve", "--port", "0", "--open", "/nonexistent/layout.json"])
        .output()
        .expect("run catoptric");
    assert_eq!(out.status.code(), Some(2));
    assert!(out.stdout.is_empty());
    assert!(String::from_utf8_lossy(&out.stderr).contains("layout.json"));
}

/// Starts `serve --port 0 --open <preset>` on an empty temporary root;
/// returns the root's parent folder, the layout path and the child.
fn serve_opening(tag: &str, preset: &str, extra: &[&str]) -> (PathBuf, PathBuf, Child) {
    let dir = std::env::temp_dir().join(format!("catoptric-serve-{tag}-{}", std::process::id()));
    std::fs::create_dir_all(dir.join("www")).unwrap();
    let layout = Path::new(env!("CARGO_MANIFEST_DIR")).join("www/presets").join(preset);
    let child = Command::new(EXE)
        .args(["serve", "--port", "0"])
        .args(extra)
        .arg("--root")
        .arg(dir.join("www"))
        .arg("--open")
        .arg(&layout)
        .stdout(Stdio::piped())
        .stderr(Stdio::null())
        .spawn()
        .unwrap();
    (dir, layout, child)
}

#[test]
fn open_prints_the_share_link() {
    let (dir, layout, mut child) = serve_opening("open", "paraboloid-f5.json", &[]);
    let rx = first_lines(&mut child);
    let mut found = None;
    for _ in 0..3 {
        match rx.recv_timeout(WAIT) {
            Ok(l) if l.contains("#L=") => {
                found = Some(l);
                break;
            }
            Ok(_) => {}
            Err(_) => break,
        }
    }
    let _ = child.kill();
    let _ = child.wait();
    let _ = std::fs::remove_dir_all(&dir);
    let line = found.expect("a line with the share link");
    let frag = &line[line.find("#L=").unwrap()..];
    let back = catoptric::layout::decode_link(frag).expect("the printed link decodes");
    let original = catoptric::parse_layout(&std::fs::read_to_string(&layout).unwrap()).unwrap();
    assert_eq!(back, original, "round trip through the printed link");
}

#[test]
fn json_start_line_names_the_address_and_the_link() {
    let (dir, layout, mut child) = serve_opening("json", "sphere-f5.json", &["--json"]);
    let rx = first_lines(&mut child);
    let line = rx.recv_timeout(WAIT);
    let _ = child.kill();
    let _ = child.wait();
    let _ = std::fs::remove_dir_all(&dir);
    let v: serde_json::Value = serde_json::from_str(&line.expect("a start line")).expect("one JSON line");
    let url = v["url"].as_str().unwrap();
    assert!(url.starts_with("http://127.0.0.1:") && !url.ends_with(":0/"), "{url}");
    let open = v["open"].as_str().unwrap();
    assert!(open.starts_with(url));
    let back = catoptric::layout::decode_link(open).unwrap();
    assert_eq!(back, catoptric::parse_layout(&std::fs::read_to_string(&layout).unwrap()).unwrap());
}

// ---- hardening: each test's loops are bounded and its server stops when dropped ----

/// How long a hardening test waits for an answer that should come at once.
const QUICK: Duration = Duration::from_secs(5);

/// Sends `bytes` as they are and reads the reply to its end, waiting at
/// most [`QUICK`]; `None` when no reply came in that time.
fn send_raw(s: &Server, bytes: &[u8]) -> Option<Reply> {
    let mut stream = TcpStream::connect_timeout(&s.addr, WAIT).expect("connect to loopback");
    stream.set_read_timeout(Some(QUICK)).unwrap();
    stream.set_write_timeout(Some(WAIT)).unwrap();
    stream.write_all(bytes).unwrap();
    let mut raw = Vec::new();
    let mut buf = [0u8; 4096];
    loop {
        match stream.read(&mut buf) {
            Ok(0) => break,
            Ok(n) => raw.extend_from_slice(&buf[..n]),
            Err(e) if matches!(e.kind(), std::io::ErrorKind::WouldBlock | std::io::ErrorKind::TimedOut) => return None,
            Err(_) => break,
        }
    }
    (!raw.is_empty()).then(|| parse_reply(&raw))
}

fn get_with_host(s: &Server, host: Option<&str>) -> u16 {
    let host = host.map(|h| format!("Host: {h}\r\n")).unwrap_or_default();
    let req = format!("GET /app.js HTTP/1.1\r\n{host}Connection: close\r\n\r\n");
    send_raw(s, req.as_bytes()).expect("an answer").status
}

// DNS rebinding: a hostile page whose name now resolves to 127.0.0.1 sends
// its own name in Host; the server answers only to loopback names with its
// own port (RFC 9110 §7.2 Host, §15.5.20 421 Misdirected Request; RFC 9112
// §3.2: 400 when Host is missing or repeated).
#[test]
fn host_header_must_name_this_server_on_loopback() {
    let s = start("host");
    let port = s.addr.port();
    for ok in [format!("127.0.0.1:{port}"), format!("localhost:{port}"), format!("LocalHost:{port}"), format!("[::1]:{port}")] {
        assert_eq!(get_with_host(&s, Some(&ok)), 200, "Host: {ok}");
    }
    let other = port.wrapping_add(1).max(1);
    for bad in [
        format!("evil.example:{port}"),
        "evil.example".to_string(),
        "127.0.0.1".to_string(),
        format!("127.0.0.1:{other}"),
        format!("localhost.evil.example:{port}"),
        format!("127.0.0.2:{port}"),
        format!("[::1]x:{port}"),
        format!("127.0.0.1:+{port}"),
    ] {
        assert_eq!(get_with_host(&s, Some(&bad)), 421, "Host: {bad}");
    }
    assert_eq!(get_with_host(&s, None), 400, "no Host");
    let two = format!("GET /app.js HTTP/1.1\r\nHost: 127.0.0.1:{port}\r\nHost: evil.example\r\n\r\n");
    assert_eq!(send_raw(&s, two.as_bytes()).expect("an answer").status, 400, "two Host headers");
}

// A request head over the cap gets 431 Request Header Fields Too Large
// (RFC 6585 §5), not a silent close.
#[test]
fn an_oversized_head_gets_431() {
    let s = start("big-head");
    let mut req = format!("GET / HTTP/1.1\r\nHost: {}\r\n", s.addr);
    for i in 0..400 {
        req.push_str(&format!("X-Filler-{i}: {}\r\n", "a".repeat(60)));
    }
    req.push_str("\r\n");
    assert!(req.len() > 16 * 1024);
    let r = send_raw(&s, req.as_bytes()).expect("an answer, not a silent close");
    assert_eq!(r.status, 431);
    assert_eq!(request(&s, "GET", "/").status, 200, "still serving");
}

// RFC 9112 §2.2: a recipient may take a bare LF as a line end. The server
// accepts it, answering at once rather than waiting for a CRLF CRLF that
// never comes.
#[test]
fn bare_lf_requests_are_answered_at_once() {
    let s = start("bare-lf");
    let req = format!("GET /app.js HTTP/1.1\nHost: {}\n\n", s.addr);
    let r = send_raw(&s, req.as_bytes()).expect("answered within a few seconds, not at the head deadline");
    assert_eq!(r.status, 200);
    assert_eq!(r.body, b"export {};");
    let mixed = format!("GET /app.js HTTP/1.1\r\nHost: {}\n\r\n", s.addr);
    assert_eq!(send_raw(&s, mixed.as_bytes()).expect("answered").status, 200);
}

// Slow-loris defence (common practice): the whole head must arrive within
// one deadline, however steadily the bytes trickle in; the server then
// answers 408 Request Timeout (RFC 9110 §15.5.9) and closes. The deadline
// is shortened to 1 s for the test (10 s by default).
#[test]
fn a_trickled_head_meets_one_deadline() {
    let s = start_with("trickle", &["--head-timeout-ms", "1000"]);
    let mut stream = TcpStream::connect_timeout(&s.addr, WAIT).expect("connect");
    stream.write_all(b"GET / HTTP/1.1\r\nX-Slow: ").unwrap();
    // Each byte is followed by a wait for the server's answer, bounded at
    // 100 ms: at most 60 bytes, and a byte per 100 ms would keep a per-read
    // timeout alive forever.
    stream.set_read_timeout(Some(Duration::from_millis(100))).unwrap();
    let mut raw = Vec::new();
    let mut closed = false;
    for _ in 0..60 {
        let _ = stream.write(b"a");
        let mut buf = [0u8; 1024];
        match stream.read(&mut buf) {
            Ok(0) => closed = true,
            Ok(n) => raw.extend_from_slice(&buf[..n]),
            Err(e) if matches!(e.kind(), std::io::ErrorKind::WouldBlock | std::io::ErrorKind::TimedOut) => {}
            Err(_) => closed = true,
        }
        if closed {
            break;
        }
    }
    // Trickling on past the deadline must not keep the head open: the
    // server closes within the 60 bytes sent.
    assert!(closed, "the server still waited after 60 trickled bytes");
    assert_eq!(parse_reply(&raw).status, 408);
}

// After the answer the server closes; it does not keep reading whatever
// the client goes on sending (common practice: one request, then close, as
// the Connection: close header says, RFC 9112 §9.6).
#[test]
fn nothing_is_read_after_the_answer() {
    let s = start("close");
    let mut stream = TcpStream::connect_timeout(&s.addr, WAIT).expect("connect");
    stream.set_read_timeout(Some(QUICK)).unwrap();
    write!(stream, "GET /app.js HTTP/1.1\r\nHost: {}\r\n\r\n", s.addr).unwrap();
    let mut raw = Vec::new();
    let mut buf = [0u8; 4096];
    while let Ok(n @ 1..) = stream.read(&mut buf) {
        raw.extend_from_slice(&buf[..n]);
    }
    assert_eq!(parse_reply(&raw).status, 200);
    // Keep talking: a closed peer resets the connection, so a write fails
    // within a few tries; between tries, wait for the reset to come back
    // (a read, bounded by QUICK).
    let mut refused = false;
    for _ in 0..30 {
        if stream.write_all(b"more bytes nobody asked for\r\n").is_err() {
            refused = true;
            break;
        }
        let _ = stream.read(&mut buf);
    }
    assert!(refused, "the server kept the connection open and went on reading");
}

// Past the connection cap (64) a client is told 503 Service Unavailable
// with Retry-After (RFC 9110 §15.6.4, §10.2.3) instead of being dropped
// without a word.
#[test]
fn past_the_connection_cap_clients_get_503() {
    let s = start_with("cap", &["--head-timeout-ms", "5000"]);
    // 64 idle connections hold every slot until their head deadline.
    let held: Vec<TcpStream> = (0..64).map(|_| TcpStream::connect_timeout(&s.addr, WAIT).expect("connect")).collect();
    let mut got = None;
    // The 65th is accepted after all of them (one listener, in order).
    let req = format!("GET / HTTP/1.1\r\nHost: {}\r\n\r\n", s.addr);
    if let Some(r) = send_raw(&s, req.as_bytes()) {
        got = Some((r.status, r.header("Retry-After").map(str::to_string)));
    }
    assert_eq!(got, Some((503, Some("1".to_string()))));
    // The held clients go: each one closes its side and waits until the
    // server has closed the connection too (its slot is then free).
    for mut c in held {
        let _ = c.shutdown(std::net::Shutdown::Write);
        let _ = c.set_read_timeout(Some(WAIT));
        let _ = c.read_to_end(&mut Vec::new());
    }
    // The slot count drops just after the close: a few tries at most.
    let mut status = 0;
    for _ in 0..20 {
        status = request(&s, "GET", "/").status;
        if status == 200 {
            break;
        }
        std::thread::yield_now();
    }
    assert_eq!(status, 200);
}
