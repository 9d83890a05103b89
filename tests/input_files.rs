//! Reading layout files: the 16 MiB cap holds for pipes and devices, which
//! have no size to check first, and text encodings are read as the page
//! reads a dropped file (UTF-8 with or without a byte order mark, UTF-16
//! with one). Basis: common practice for bounded input (read through a
//! limit, never to the end of an unbounded stream); byte order marks as the
//! Unicode Standard (§23.8) and the WHATWG Encoding Standard define them.

use std::io::Write as _;
use std::path::PathBuf;
use std::process::{Command, Output, Stdio};
use std::time::Duration;

const EXE: &str = env!("CARGO_BIN_EXE_catoptric");
const PRESET: &str = concat!(env!("CARGO_MANIFEST_DIR"), "/www/presets/paraboloid-f5.json");
/// A bound on a refusal: past it the test stops (and kills the child)
/// rather than letting a reader that never stops run on. A guard against a
/// hang, not a measurement.
const LIMIT: Duration = Duration::from_secs(60);

/// Runs the binary, feeding `stdin` from a thread; kills it if it has not
/// finished within [`LIMIT`].
fn run(args: &[&str], stdin: Option<Box<dyn FnOnce(std::process::ChildStdin) + Send>>) -> Output {
    let mut child = Command::new(EXE)
        .args(args)
        .stdin(if stdin.is_some() { Stdio::piped() } else { Stdio::null() })
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("run catoptric");
    if let Some(feed) = stdin {
        let pipe = child.stdin.take().unwrap();
        std::thread::spawn(move || feed(pipe));
    }
    // The child's end is awaited on a thread; this one waits for its word.
    let pid = child.id();
    let (tx, rx) = std::sync::mpsc::channel();
    std::thread::spawn(move || {
        let _ = tx.send(child.wait_with_output());
    });
    match rx.recv_timeout(LIMIT) {
        Ok(out) => out.unwrap(),
        Err(_) => {
            let _ = Command::new("kill").args(["-9", &pid.to_string()]).status();
            panic!("catoptric {args:?} still reading after {LIMIT:?}");
        }
    }
}

fn temp(name: &str, bytes: &[u8]) -> PathBuf {
    let dir = std::path::Path::new(env!("CARGO_TARGET_TMPDIR")).join("input_files");
    std::fs::create_dir_all(&dir).unwrap();
    let p = dir.join(name);
    std::fs::write(&p, bytes).unwrap();
    p
}

fn refused_for_size(out: &Output) {
    let err = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(2), "{err}");
    assert!(out.stdout.is_empty());
    assert!(err.contains("16 MiB") && err.lines().count() == 1, "{err}");
}

#[test]
#[cfg(unix)]
fn an_endless_device_is_refused_at_the_cap() {
    let out = run(&["trace", "/dev/zero"], None);
    refused_for_size(&out);
    assert!(String::from_utf8_lossy(&out.stderr).contains("/dev/zero"));
}

#[test]
#[cfg(unix)]
fn a_pipe_is_held_to_the_cap_and_read_when_small() {
    // 17 MiB of spaces (valid JSON padding) through a pipe.
    let feed = |mut pipe: std::process::ChildStdin| {
        let block = vec![b' '; 1 << 20];
        for _ in 0..17 {
            if pipe.write_all(&block).is_err() {
                return; // the reader stopped at the cap
            }
        }
    };
    let out = run(&["trace", "/dev/stdin"], Some(Box::new(feed)));
    refused_for_size(&out);
    // A layout through a pipe is read as from a file.
    let text = std::fs::read(PRESET).unwrap();
    let feed = move |mut pipe: std::process::ChildStdin| {
        let _ = pipe.write_all(&text);
    };
    let out = run(&["link", "/dev/stdin"], Some(Box::new(feed)));
    assert_eq!(out.status.code(), Some(0), "{}", String::from_utf8_lossy(&out.stderr));
    assert!(String::from_utf8_lossy(&out.stdout).starts_with("#L="));
}

#[test]
fn byte_order_marks_and_utf16_are_read_like_plain_utf8() {
    let text = std::fs::read_to_string(PRESET).unwrap();
    let link = |p: &PathBuf| {
        let out = run(&["link", p.to_str().unwrap()], None);
        let err = String::from_utf8_lossy(&out.stderr).into_owned();
        (out.status.code(), String::from_utf8_lossy(&out.stdout).into_owned(), err)
    };
    let (code, plain, err) = link(&temp("plain.json", text.as_bytes()));
    assert_eq!(code, Some(0), "{err}");
    let bom8: Vec<u8> = b"\xef\xbb\xbf".iter().copied().chain(text.bytes()).collect();
    let le: Vec<u8> = [0xff, 0xfe].into_iter().chain(text.encode_utf16().flat_map(u16::to_le_bytes)).collect();
    let be: Vec<u8> = [0xfe, 0xff].into_iter().chain(text.encode_utf16().flat_map(u16::to_be_bytes)).collect();
    for (name, bytes) in [("bom8.json", bom8), ("utf16le.json", le), ("utf16be.json", be)] {
        let (code, out, err) = link(&temp(name, &bytes));
        assert_eq!(code, Some(0), "{name}: {err}");
        assert_eq!(out, plain, "{name} gives the same layout");
    }
    // UTF-16 without its mark, or broken UTF-8, is refused in one line.
    let bare16: Vec<u8> = text.encode_utf16().flat_map(u16::to_le_bytes).collect();
    for (name, bytes) in [("bare16.json", bare16), ("latin1.json", b"{\"name\": \"\xe9\"}".to_vec())] {
        let (code, out, err) = link(&temp(name, &bytes));
        assert_eq!(code, Some(2), "{name}");
        assert!(out.is_empty());
        assert!(err.contains(name) && err.lines().count() == 1, "{err}");
    }
}
