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
    write(&www.join("sub/index.html"), b"<!doctype html><p>sub</p>");
    write(&base.join("Cargo.toml"), b"SECRET-OUTSIDE-ROOT");
    #[cfg(unix)]
    std::os::unix::fs::symlink(base.join("Cargo.toml"), www.join("leak.txt")).unwrap();

    let mut child = Command::new(EXE)
        .args(["serve", "--port", "0", "--root"])
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
    write!(stream, "{method} {target} HTTP/1.1\r\nHost: 127.0.0.1\r\nConnection: close\r\n\r\n").unwrap();
    let mut raw = Vec::new();
    stream.read_to_end(&mut raw).expect("read reply");
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
