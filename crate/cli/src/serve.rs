//! A small static file server for the page, used by `critbox serve`.
//!
//! It serves the files under one root folder over HTTP/1.1 on 127.0.0.1
//! only, answers GET and HEAD, and closes every connection after one
//! response. Request paths are percent-decoded and checked segment by
//! segment: `..`, NUL, backslashes, hidden (dot) names and anything whose
//! real path (after following symlinks) leaves the root are refused. Every
//! answer carries the page's Content-Security-Policy (read at build time
//! from the meta element of `web/index.html`, its one definition), `Cache-Control:
//! no-store` and `X-Content-Type-Options: nosniff`.
//!
//! Main items: [`serve`] (bind, report the address, serve forever),
//! [`bind`] and [`Server`] (the bound listener), [`handle`] (one request in,
//! one [`Response`] out, no I/O but reading files) and [`ServeError`].

use std::fmt;
use std::fs;
use std::io::{self, Read, Write};
use std::net::{Ipv4Addr, SocketAddr, TcpListener, TcpStream};
use std::path::{Component, Path, PathBuf};
use std::sync::atomic::{AtomicUsize, Ordering};
use std::sync::Arc;
use std::thread;
use std::time::Duration;

/// The page, whose `<meta http-equiv="Content-Security-Policy">` is the one
/// place the policy is written (the single-file build derives its own from
/// it the same way, see scripts/build-single).
const PAGE: &str = include_str!("../../../web/index.html");

/// The Content-Security-Policy sent with every response: the page's own
/// policy, read from `web/index.html` when the binary is built (a page
/// without one, or with one spread over lines, fails the build). Workers
/// take their policy from their own response, so they run under the same
/// rules as the page: its own files only, WebAssembly compilation allowed,
/// no connection anywhere else.
pub const CSP: &str = meta_policy(PAGE);

/// The `content` of the Content-Security-Policy meta element in `html`.
/// A `const fn`, so a page whose policy cannot be found stops the build.
const fn meta_policy(html: &str) -> &str {
    let bytes = html.as_bytes();
    let Some(at) = find(bytes, b"http-equiv=\"Content-Security-Policy\"", 0) else {
        panic!("web/index.html has no <meta http-equiv=\"Content-Security-Policy\">");
    };
    let Some(open) = find(bytes, b"content=\"", at) else {
        panic!("web/index.html: the Content-Security-Policy meta element has no content=\"...\"");
    };
    let start = open + 9;
    let mut end = start;
    while end < bytes.len() && bytes[end] != b'"' {
        if bytes[end] == b'\n' || bytes[end] == b'\r' {
            panic!(
                "web/index.html: keep the Content-Security-Policy on one line (it is also an HTTP header)"
            );
        }
        end += 1;
    }
    let (_, tail) = bytes.split_at(start);
    let (policy, _) = tail.split_at(end - start);
    match std::str::from_utf8(policy) {
        Ok(p) => p,
        Err(_) => panic!("web/index.html: the Content-Security-Policy is not UTF-8"),
    }
}

/// Index of the first `needle` in `hay` at or after `from`.
const fn find(hay: &[u8], needle: &[u8], from: usize) -> Option<usize> {
    let mut i = from;
    while i + needle.len() <= hay.len() {
        let mut k = 0;
        while k < needle.len() && hay[i + k] == needle[k] {
            k += 1;
        }
        if k == needle.len() {
            return Some(i);
        }
        i += 1;
    }
    None
}

/// Largest request head (request line and headers) read, in bytes.
const MAX_HEAD: usize = 16 * 1024;
/// Connections served at once; more get a 503 straight away.
const MAX_CONNECTIONS: usize = 64;
/// How long a client may take to send its request or read the answer.
const IO_TIMEOUT: Duration = Duration::from_secs(15);

/// Why the server could not start.
#[derive(Debug)]
pub enum ServeError {
    /// The root folder does not exist or cannot be read.
    Root {
        /// The root as given.
        path: PathBuf,
        /// What the file system said.
        source: io::Error,
    },
    /// The root exists but is not a folder.
    RootNotDirectory {
        /// The root as given.
        path: PathBuf,
    },
    /// Another program already listens on the port.
    PortBusy {
        /// The port asked for.
        port: u16,
    },
    /// The system refused the port (ports below 1024 need privileges).
    PortDenied {
        /// The port asked for.
        port: u16,
    },
    /// Any other failure to listen.
    Bind {
        /// The port asked for.
        port: u16,
        /// What the system said.
        source: io::Error,
    },
}

impl fmt::Display for ServeError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            ServeError::Root { path, source } => {
                write!(f, "cannot serve folder {}: {source}", path.display())
            }
            ServeError::RootNotDirectory { path } => {
                write!(f, "cannot serve {}: it is not a folder", path.display())
            }
            ServeError::PortBusy { port } => write!(
                f,
                "port {port} on 127.0.0.1 is already in use by another program; \
                 choose another with --port N (0 lets the system pick a free one)"
            ),
            ServeError::PortDenied { port } => write!(
                f,
                "not allowed to listen on port {port} on 127.0.0.1 \
                 (ports below 1024 need privileges); choose another with --port N"
            ),
            ServeError::Bind { port, source } => {
                write!(f, "cannot listen on 127.0.0.1 port {port}: {source}")
            }
        }
    }
}

impl std::error::Error for ServeError {
    fn source(&self) -> Option<&(dyn std::error::Error + 'static)> {
        match self {
            ServeError::Root { source, .. } | ServeError::Bind { source, .. } => Some(source),
            _ => None,
        }
    }
}

/// Binds 127.0.0.1:`port` (0 lets the system choose), prints nothing, calls
/// `ready` with the address (`http://127.0.0.1:PORT/`) once the port is
/// open, then serves the files under `root` until the process ends.
pub fn serve(root: &Path, port: u16, ready: impl FnOnce(&str)) -> Result<(), ServeError> {
    let server = bind(root, port)?;
    ready(&server.url());
    server.run();
    Ok(())
}

/// A listener bound on 127.0.0.1 with the folder it serves.
#[derive(Debug)]
pub struct Server {
    listener: TcpListener,
    root: PathBuf,
    addr: SocketAddr,
}

/// Checks `root` and binds 127.0.0.1:`port` (0 lets the system choose).
pub fn bind(root: &Path, port: u16) -> Result<Server, ServeError> {
    let canonical =
        fs::canonicalize(root).map_err(|source| ServeError::Root { path: root.to_path_buf(), source })?;
    if !canonical.is_dir() {
        return Err(ServeError::RootNotDirectory { path: root.to_path_buf() });
    }
    let listener = TcpListener::bind((Ipv4Addr::LOCALHOST, port)).map_err(|source| match source.kind() {
        io::ErrorKind::AddrInUse => ServeError::PortBusy { port },
        io::ErrorKind::PermissionDenied => ServeError::PortDenied { port },
        _ => ServeError::Bind { port, source },
    })?;
    let addr = listener.local_addr().map_err(|source| ServeError::Bind { port, source })?;
    Ok(Server { listener, root: canonical, addr })
}

impl Server {
    /// The address actually bound (the real port when 0 was asked for).
    pub fn local_addr(&self) -> SocketAddr {
        self.addr
    }

    /// The page's address, `http://127.0.0.1:PORT/`.
    pub fn url(&self) -> String {
        format!("http://{}/", self.local_addr())
    }

    /// Serves connections, one thread each, until the process ends. A
    /// failed accept (say, out of file descriptors) is reported on stderr
    /// and the loop goes on after a short pause.
    pub fn run(self) {
        let root = Arc::new(self.root);
        let active = Arc::new(AtomicUsize::new(0));
        for incoming in self.listener.incoming() {
            let mut stream = match incoming {
                Ok(stream) => stream,
                Err(err) => {
                    eprintln!("critbox serve: accepting a connection failed: {err}");
                    thread::sleep(Duration::from_millis(50));
                    continue;
                }
            };
            if active.fetch_add(1, Ordering::SeqCst) >= MAX_CONNECTIONS {
                active.fetch_sub(1, Ordering::SeqCst);
                let busy = Response::error(503, "too many connections at once, try again");
                let _ = stream.set_write_timeout(Some(IO_TIMEOUT));
                let _ = stream.write_all(&busy.to_bytes());
                continue;
            }
            let root = Arc::clone(&root);
            let done = Arc::clone(&active);
            let spawned = thread::Builder::new().name("critbox-serve".to_string()).spawn(move || {
                serve_connection(&root, stream);
                done.fetch_sub(1, Ordering::SeqCst);
            });
            if let Err(err) = spawned {
                active.fetch_sub(1, Ordering::SeqCst);
                eprintln!("critbox serve: cannot start a thread for a connection: {err}");
            }
        }
    }
}

/// Reads one request from `stream`, answers it and closes the connection.
fn serve_connection(root: &Path, mut stream: TcpStream) {
    let _ = stream.set_read_timeout(Some(IO_TIMEOUT));
    let _ = stream.set_write_timeout(Some(IO_TIMEOUT));
    let response = match read_head(&mut stream) {
        Ok(Some(head)) => handle(root, &head),
        Ok(None) => return, // the client closed without sending anything
        Err(HeadError::TooLarge) => Response::error(431, "request head too large"),
        Err(HeadError::Incomplete) => Response::error(400, "request ended before its head"),
        Err(HeadError::Io) => return,
    };
    if response.status >= 400 {
        eprintln!("critbox serve: {} {}", response.status, response.request_line);
    }
    let _ = stream.write_all(&response.to_bytes());
    let _ = stream.flush();
    let _ = stream.shutdown(std::net::Shutdown::Both);
}

/// What went wrong while reading a request head.
#[derive(Debug)]
enum HeadError {
    TooLarge,
    Incomplete,
    /// Timed out or reset: nobody left to answer.
    Io,
}

/// Reads until the blank line that ends the request head. `Ok(None)` when
/// the client closed the connection before sending a byte.
fn read_head(stream: &mut impl Read) -> Result<Option<Vec<u8>>, HeadError> {
    let mut head = Vec::with_capacity(1024);
    let mut chunk = [0u8; 2048];
    loop {
        let n = match stream.read(&mut chunk) {
            Ok(n) => n,
            Err(err) if err.kind() == io::ErrorKind::Interrupted => continue,
            Err(_) => return Err(HeadError::Io),
        };
        if n == 0 {
            return if head.is_empty() { Ok(None) } else { Err(HeadError::Incomplete) };
        }
        head.extend_from_slice(&chunk[..n]);
        if let Some(end) = head_end(&head) {
            head.truncate(end);
            return Ok(Some(head));
        }
        if head.len() > MAX_HEAD {
            return Err(HeadError::TooLarge);
        }
    }
}

/// Index just past the blank line ending the head (`\r\n\r\n` or `\n\n`).
fn head_end(buf: &[u8]) -> Option<usize> {
    let crlf = buf.windows(4).position(|w| w == b"\r\n\r\n").map(|i| i + 4);
    let lf = buf.windows(2).position(|w| w == b"\n\n").map(|i| i + 2);
    match (crlf, lf) {
        (Some(a), Some(b)) => Some(a.min(b)),
        (a, b) => a.or(b),
    }
}

fn first_line(bytes: &[u8]) -> &[u8] {
    let end = bytes.iter().position(|&b| b == b'\r' || b == b'\n').unwrap_or(bytes.len());
    &bytes[..end]
}

/// One HTTP response, ready to be written with [`Response::to_bytes`].
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Response {
    /// Status code, e.g. 200 or 404.
    pub status: u16,
    /// Header names and values, in the order they are sent.
    pub headers: Vec<(&'static str, String)>,
    /// The body; empty for HEAD, whose `Content-Length` still gives the
    /// size a GET would send.
    pub body: Vec<u8>,
    /// `METHOD target` of the request answered, for logging ("-" if none).
    pub request_line: String,
}

impl Response {
    fn new(status: u16, content_type: &str, length: usize, body: Vec<u8>) -> Response {
        Response {
            status,
            headers: vec![
                ("Content-Type", content_type.to_string()),
                ("Content-Length", length.to_string()),
                ("Content-Security-Policy", CSP.to_string()),
                ("Cache-Control", "no-store".to_string()),
                ("X-Content-Type-Options", "nosniff".to_string()),
                ("Connection", "close".to_string()),
            ],
            body,
            request_line: "-".to_string(),
        }
    }

    /// A plain-text error answer whose body is `message`.
    fn error(status: u16, message: &str) -> Response {
        let body = format!("{status} {}: {message}\n", reason(status)).into_bytes();
        Response::new(status, "text/plain; charset=utf-8", body.len(), body)
    }

    /// The value of the first header called `name` (case-insensitive).
    #[cfg(test)]
    pub fn header(&self, name: &str) -> Option<&str> {
        self.headers.iter().find(|(n, _)| n.eq_ignore_ascii_case(name)).map(|(_, v)| v.as_str())
    }

    /// Status line, headers, blank line and body as sent on the wire.
    pub fn to_bytes(&self) -> Vec<u8> {
        let mut out = format!("HTTP/1.1 {} {}\r\n", self.status, reason(self.status)).into_bytes();
        for (name, value) in &self.headers {
            out.extend_from_slice(format!("{name}: {value}\r\n").as_bytes());
        }
        out.extend_from_slice(b"\r\n");
        out.extend_from_slice(&self.body);
        out
    }
}

fn reason(status: u16) -> &'static str {
    match status {
        200 => "OK",
        301 => "Moved Permanently",
        400 => "Bad Request",
        403 => "Forbidden",
        404 => "Not Found",
        405 => "Method Not Allowed",
        431 => "Request Header Fields Too Large",
        500 => "Internal Server Error",
        503 => "Service Unavailable",
        505 => "HTTP Version Not Supported",
        _ => "Unknown",
    }
}

/// The media type for a file name, by its extension (case-insensitive).
/// Unknown extensions get `application/octet-stream`.
pub fn mime_type(path: &Path) -> &'static str {
    let ext = path.extension().and_then(|e| e.to_str()).unwrap_or("").to_ascii_lowercase();
    match ext.as_str() {
        "html" | "htm" => "text/html; charset=utf-8",
        "js" | "mjs" => "text/javascript; charset=utf-8",
        "css" => "text/css; charset=utf-8",
        "json" | "map" => "application/json",
        "wasm" => "application/wasm",
        "png" => "image/png",
        "svg" => "image/svg+xml",
        "ico" => "image/x-icon",
        "txt" => "text/plain; charset=utf-8",
        "csv" => "text/csv; charset=utf-8",
        _ => "application/octet-stream",
    }
}

/// Answers one request head (`request` holds the request line and headers)
/// with a file from `root`. Never panics on any input.
pub fn handle(root: &Path, request: &[u8]) -> Response {
    let line = first_line(request);
    let mut response = match fs::canonicalize(root) {
        Ok(root) => answer(&root, line),
        Err(_) => Response::error(500, "the served folder is gone"),
    };
    response.request_line = String::from_utf8_lossy(line).split(' ').take(2).collect::<Vec<_>>().join(" ");
    response
}

fn answer(root: &Path, line: &[u8]) -> Response {
    let Ok(line) = std::str::from_utf8(line) else {
        return Response::error(400, "request line is not UTF-8");
    };
    let mut parts = line.split(' ');
    let (Some(method), Some(target), Some(version), None) =
        (parts.next(), parts.next(), parts.next(), parts.next())
    else {
        return Response::error(400, "request line must be METHOD TARGET HTTP/1.x");
    };
    if !version.starts_with("HTTP/1.") {
        return if version.starts_with("HTTP/") {
            Response::error(505, "only HTTP/1.x is served")
        } else {
            Response::error(400, "request line must end with HTTP/1.x")
        };
    }
    let head_only = match method {
        "GET" => false,
        "HEAD" => true,
        _ => {
            let mut r = Response::error(405, "only GET and HEAD are served");
            r.headers.push(("Allow", "GET, HEAD".to_string()));
            return r;
        }
    };
    let raw_path = target.split(['?', '#']).next().unwrap_or("");
    if !raw_path.starts_with('/') {
        return Response::error(400, "request target must be a path starting with /");
    }
    let relative = match safe_relative_path(raw_path) {
        Ok(p) => p,
        Err(refusal) => return refusal.response(),
    };
    let mut response = match resolve(root, &relative, raw_path.ends_with('/')) {
        Ok(Resolved::File(file)) => file_response(&file),
        Ok(Resolved::Directory) => {
            // A folder asked for without its slash: redirect so that the
            // page's relative links resolve inside the folder.
            let mut r = Response::error(301, "this is a folder; its address ends with /");
            r.headers.push(("Location", folder_location(&relative)));
            r
        }
        Err(refusal) => refusal.response(),
    };
    if head_only {
        response.body.clear();
    }
    response
}

/// The absolute path `/a/b/` for the folder `a/b`, percent-encoded, built
/// from the checked names only (so it can never point at another host).
fn folder_location(relative: &Path) -> String {
    let mut out = String::from("/");
    for component in relative.components() {
        if let Component::Normal(name) = component {
            for &b in name.to_string_lossy().as_bytes() {
                if b.is_ascii_alphanumeric() || b"-._~".contains(&b) {
                    out.push(char::from(b));
                } else {
                    out.push_str(&format!("%{b:02X}"));
                }
            }
            out.push('/');
        }
    }
    out
}

/// Why a request path is not served.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Refusal {
    BadEncoding,
    Forbidden,
    NotFound,
    ReadFailed,
}

impl Refusal {
    fn response(self) -> Response {
        match self {
            Refusal::BadEncoding => Response::error(400, "bad percent-encoding or non-UTF-8 bytes in path"),
            Refusal::Forbidden => Response::error(403, "this path is outside the served folder"),
            Refusal::NotFound => Response::error(404, "no such file"),
            Refusal::ReadFailed => Response::error(500, "the file could not be read"),
        }
    }
}

/// Decodes `%XX` escapes. `None` for a malformed escape or non-UTF-8 result.
fn percent_decode(s: &str) -> Option<String> {
    let bytes = s.as_bytes();
    let mut out = Vec::with_capacity(bytes.len());
    let mut i = 0;
    while i < bytes.len() {
        if bytes[i] == b'%' {
            let hex = bytes.get(i + 1..i + 3)?;
            let hex = std::str::from_utf8(hex).ok()?;
            out.push(u8::from_str_radix(hex, 16).ok()?);
            i += 3;
        } else {
            out.push(bytes[i]);
            i += 1;
        }
    }
    String::from_utf8(out).ok()
}

/// Turns a URL path into a relative path of plain names. Empty and `.`
/// segments are dropped; `..`, NUL, backslashes, drive-like `:` names and
/// hidden names are refused before the file system is touched.
fn safe_relative_path(raw: &str) -> Result<PathBuf, Refusal> {
    let decoded = percent_decode(raw).ok_or(Refusal::BadEncoding)?;
    let mut out = PathBuf::new();
    for segment in decoded.split('/') {
        if segment.is_empty() || segment == "." {
            continue;
        }
        if segment == ".." || segment.contains(['\0', '\\', ':']) {
            return Err(Refusal::Forbidden);
        }
        if segment.starts_with('.') {
            return Err(Refusal::NotFound);
        }
        let mut components = Path::new(segment).components();
        match (components.next(), components.next()) {
            (Some(Component::Normal(_)), None) => out.push(segment),
            _ => return Err(Refusal::Forbidden),
        }
    }
    Ok(out)
}

enum Resolved {
    File(PathBuf),
    Directory,
}

/// Finds the file for `relative` under `root`, following symlinks only
/// while they stay inside `root`. A folder serves its `index.html`; a
/// folder asked for without a trailing slash (other than the root) is
/// reported so the caller can redirect.
fn resolve(root: &Path, relative: &Path, trailing_slash: bool) -> Result<Resolved, Refusal> {
    let real = canonical_inside(root, &root.join(relative))?;
    if real.is_dir() {
        if relative.as_os_str().is_empty() || trailing_slash {
            return Ok(Resolved::File(canonical_inside(root, &real.join("index.html"))?));
        }
        return Ok(Resolved::Directory);
    }
    if trailing_slash {
        // `/style.css/` names a folder that does not exist.
        return Err(Refusal::NotFound);
    }
    Ok(Resolved::File(real))
}

fn canonical_inside(root: &Path, path: &Path) -> Result<PathBuf, Refusal> {
    let real = fs::canonicalize(path).map_err(|err| match err.kind() {
        io::ErrorKind::PermissionDenied => Refusal::Forbidden,
        _ => Refusal::NotFound,
    })?;
    if real.starts_with(root) {
        Ok(real)
    } else {
        Err(Refusal::Forbidden)
    }
}

fn file_response(path: &Path) -> Response {
    match fs::read(path) {
        Ok(body) => Response::new(200, mime_type(path), body.len(), body),
        Err(err) => match err.kind() {
            io::ErrorKind::PermissionDenied => Refusal::Forbidden.response(),
            io::ErrorKind::NotFound => Refusal::NotFound.response(),
            _ => Refusal::ReadFailed.response(),
        },
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::io::Cursor;
    use std::sync::atomic::AtomicU32;

    static NEXT_DIR: AtomicU32 = AtomicU32::new(0);

    /// A fresh folder `<tmp>/critbox-serve-<pid>-<n>/` holding `site/` (the
    /// root) and, beside it, `secret.txt` that must never be served.
    struct Fixture {
        base: PathBuf,
        root: PathBuf,
    }

    impl Fixture {
        fn new() -> Fixture {
            let n = NEXT_DIR.fetch_add(1, Ordering::SeqCst);
            let base = std::env::temp_dir().join(format!("critbox-serve-{}-{n}", std::process::id()));
            let _ = fs::remove_dir_all(&base);
            let root = base.join("site");
            fs::create_dir_all(root.join("js")).unwrap();
            fs::create_dir_all(root.join("pkg")).unwrap();
            fs::create_dir_all(root.join("docs")).unwrap();
            fs::write(base.join("secret.txt"), "SECRET-OUTSIDE-ROOT").unwrap();
            fs::write(root.join("index.html"), "<!doctype html><p>home</p>").unwrap();
            fs::write(root.join("style.css"), "p{}").unwrap();
            fs::write(root.join("js/app.js"), "export {};").unwrap();
            fs::write(root.join("js/mod.mjs"), "export {};").unwrap();
            fs::write(root.join("pkg/critbox_wasm.wasm"), b"\0asm\x01\0\0\0").unwrap();
            fs::write(root.join("docs/index.html"), "<p>docs</p>").unwrap();
            fs::write(root.join("a b.txt"), "spaced").unwrap();
            fs::write(root.join(".hidden"), "hidden").unwrap();
            Fixture { base, root }
        }

        fn get(&self, target: &str) -> Response {
            handle(&self.root, format!("GET {target} HTTP/1.1\r\nHost: x\r\n\r\n").as_bytes())
        }
    }

    impl Drop for Fixture {
        fn drop(&mut self) {
            let _ = fs::remove_dir_all(&self.base);
        }
    }

    fn body_text(r: &Response) -> String {
        String::from_utf8_lossy(&r.body).into_owned()
    }

    #[test]
    fn root_serves_index_html_with_the_security_headers() {
        let f = Fixture::new();
        let r = f.get("/");
        assert_eq!(r.status, 200);
        assert_eq!(body_text(&r), "<!doctype html><p>home</p>");
        assert_eq!(r.header("content-type"), Some("text/html; charset=utf-8"));
        assert_eq!(r.header("Content-Length"), Some("26"));
        assert_eq!(r.header("Content-Security-Policy"), Some(CSP));
        assert!(CSP.contains("script-src 'self' 'wasm-unsafe-eval'"));
        assert!(CSP.contains("connect-src 'self'"));
        assert_eq!(r.header("Cache-Control"), Some("no-store"));
        assert_eq!(r.header("X-Content-Type-Options"), Some("nosniff"));
        assert_eq!(r.header("Connection"), Some("close"));
    }

    #[test]
    fn the_policy_is_the_pages_own_meta_element() {
        // Common practice, no source: one definition, read back independently.
        let meta = PAGE.split("http-equiv=\"Content-Security-Policy\"").nth(1).unwrap();
        let content = meta.split("content=\"").nth(1).unwrap().split('"').next().unwrap();
        assert_eq!(CSP, content);
        assert!(CSP.starts_with("default-src 'none';"));
        assert!(!CSP.contains('\n'));
        assert_eq!(meta_policy("<meta http-equiv=\"Content-Security-Policy\" content=\"a 'b'\">"), "a 'b'");
    }

    #[test]
    fn mime_types_by_extension() {
        // text/javascript for .js and .mjs: RFC 9239 (Miller, Borins, Bynens,
        // Farias, 2022), section 6. application/wasm: W3C WebAssembly Web
        // API (2019), section "Streaming Modules" (compileStreaming refuses
        // any other type). Others: IANA media type registry, from memory.
        let cases = [
            ("index.html", "text/html; charset=utf-8"),
            ("a.HTM", "text/html; charset=utf-8"),
            ("app.js", "text/javascript; charset=utf-8"),
            ("mod.mjs", "text/javascript; charset=utf-8"),
            ("style.css", "text/css; charset=utf-8"),
            ("preset.json", "application/json"),
            ("critbox_wasm.wasm", "application/wasm"),
            ("shot.png", "image/png"),
            ("icon.svg", "image/svg+xml"),
            ("notes.txt", "text/plain; charset=utf-8"),
            ("curve.csv", "text/csv; charset=utf-8"),
            ("blob.bin", "application/octet-stream"),
            ("no_extension", "application/octet-stream"),
        ];
        for (name, want) in cases {
            assert_eq!(mime_type(Path::new(name)), want, "{name}");
        }
        let f = Fixture::new();
        assert_eq!(f.get("/js/app.js").header("Content-Type"), Some("text/javascript; charset=utf-8"));
        assert_eq!(f.get("/js/mod.mjs").header("Content-Type"), Some("text/javascript; charset=utf-8"));
        let wasm = f.get("/pkg/critbox_wasm.wasm");
        assert_eq!(wasm.status, 200);
        assert_eq!(wasm.header("Content-Type"), Some("application/wasm"));
        assert_eq!(wasm.body, b"\0asm\x01\0\0\0");
    }

    #[test]
    fn missing_and_hidden_files_are_404() {
        let f = Fixture::new();
        for target in ["/nope.js", "/js/nope.js", "/.hidden", "/js/app.js/", "/index.html/x"] {
            let r = f.get(target);
            assert_eq!(r.status, 404, "{target}");
            assert!(!body_text(&r).contains("hidden\n"), "{target}");
        }
    }

    #[test]
    fn head_sends_the_length_but_no_body() {
        let f = Fixture::new();
        let get = f.get("/style.css");
        let head = handle(&f.root, b"HEAD /style.css HTTP/1.1\r\n\r\n");
        assert_eq!(head.status, 200);
        assert!(head.body.is_empty());
        assert_eq!(head.header("Content-Length"), Some("3"));
        assert_eq!(head.header("Content-Length"), get.header("Content-Length"));
        assert_eq!(head.header("Content-Type"), Some("text/css; charset=utf-8"));
        let wire = head.to_bytes();
        assert!(wire.ends_with(b"\r\n\r\n"), "HEAD must end after the headers");
        let missing = handle(&f.root, b"HEAD /nope HTTP/1.1\r\n\r\n");
        assert_eq!(missing.status, 404);
        assert!(missing.body.is_empty());
    }

    #[test]
    fn traversal_is_refused_and_never_leaks_the_outside_file() {
        let f = Fixture::new();
        let refused = [
            "/../secret.txt",
            "/js/../../secret.txt",
            "/%2e%2e/secret.txt",
            "/%2E%2E%2Fsecret.txt",
            "/..%2fsecret.txt",
            "/js/..%5c..%5csecret.txt",
            "/..\\secret.txt",
            "/index.html%00.js",
            "/c:/secret.txt",
        ];
        for target in refused {
            let r = f.get(target);
            assert_eq!(r.status, 403, "{target}");
            assert!(!body_text(&r).contains("SECRET"), "{target}");
        }
        // A doubled slash is not an absolute file path: it stays in the root.
        let abs = f.get(&format!("/{}", f.base.join("secret.txt").display()));
        assert_eq!(abs.status, 404);
        assert!(!body_text(&abs).contains("SECRET"));
        // Absolute-form and other targets that are not a path.
        for target in ["http://127.0.0.1/secret.txt", "secret.txt", "*"] {
            assert_eq!(f.get(target).status, 400, "{target}");
        }
        // Broken escapes and non-UTF-8 bytes.
        for target in ["/%zz", "/%4", "/%ff"] {
            assert_eq!(f.get(target).status, 400, "{target}");
        }
    }

    #[cfg(unix)]
    #[test]
    fn symlinks_may_not_leave_the_root() {
        use std::os::unix::fs::symlink;
        let f = Fixture::new();
        symlink(f.base.join("secret.txt"), f.root.join("leak.txt")).unwrap();
        symlink(&f.base, f.root.join("up")).unwrap();
        symlink(f.root.join("style.css"), f.root.join("alias.css")).unwrap();
        for target in ["/leak.txt", "/up/secret.txt", "/up/"] {
            let r = f.get(target);
            assert_eq!(r.status, 403, "{target}");
            assert!(!body_text(&r).contains("SECRET"), "{target}");
        }
        let inside = f.get("/alias.css");
        assert_eq!(inside.status, 200);
        assert_eq!(body_text(&inside), "p{}");
    }

    #[test]
    fn folders_serve_index_html_and_redirect_without_slash() {
        let f = Fixture::new();
        let r = f.get("/docs/");
        assert_eq!(r.status, 200);
        assert_eq!(body_text(&r), "<p>docs</p>");
        let r = f.get("/docs");
        assert_eq!(r.status, 301);
        assert_eq!(r.header("Location"), Some("/docs/"));
        // Folder without index.html.
        assert_eq!(f.get("/js/").status, 404);
    }

    #[test]
    fn query_strings_and_escapes_are_handled() {
        let f = Fixture::new();
        assert_eq!(body_text(&f.get("/style.css?v=3#top")), "p{}");
        assert_eq!(body_text(&f.get("/a%20b.txt")), "spaced");
        assert_eq!(body_text(&f.get("/?config=abc")), "<!doctype html><p>home</p>");
        assert_eq!(body_text(&f.get("//js//./app.js")), "export {};");
    }

    #[test]
    fn bad_requests_get_clear_status_codes() {
        let f = Fixture::new();
        // Status codes from RFC 9110 (Fielding, Nottingham, Reschke, 2022),
        // section 15; 431 from RFC 6585 (Nottingham, Fielding, 2012), section 5.
        let post = handle(&f.root, b"POST / HTTP/1.1\r\n\r\n");
        assert_eq!(post.status, 405);
        assert_eq!(post.header("Allow"), Some("GET, HEAD"));
        assert_eq!(handle(&f.root, b"get / HTTP/1.1\r\n\r\n").status, 405);
        assert_eq!(handle(&f.root, b"GET / HTTP/2.0\r\n\r\n").status, 505);
        assert_eq!(handle(&f.root, b"GET /\r\n\r\n").status, 400);
        assert_eq!(handle(&f.root, b"GET / HTTP/1.1 extra\r\n\r\n").status, 400);
        assert_eq!(handle(&f.root, b"\xff\xfe / HTTP/1.1\r\n\r\n").status, 400);
        assert_eq!(handle(&f.root, b"").status, 400);
        assert_eq!(handle(&f.root, b"GET / HTTP/1.0\n\n").status, 200);
        let wire = String::from_utf8(post.to_bytes()).unwrap();
        assert!(wire.starts_with("HTTP/1.1 405 Method Not Allowed\r\n"), "{wire}");
        assert!(wire.contains("\r\nAllow: GET, HEAD\r\n"), "{wire}");
    }

    #[test]
    fn handle_survives_arbitrary_bytes() {
        let f = Fixture::new();
        // A fixed pseudo-random walk over bytes that matter to the parser.
        let alphabet = b"GETHAD /.%2e5cfF0\0\\:?#\r\n\xff";
        let mut state: u64 = 0x9E37_79B9_7F4A_7C15;
        for _ in 0..2000 {
            let mut req = Vec::new();
            for _ in 0..(state % 40) {
                state = state.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
                req.push(alphabet[(state >> 33) as usize % alphabet.len()]);
            }
            let r = handle(&f.root, &req);
            assert!(!body_text(&r).contains("SECRET"));
            assert!((200..600).contains(&r.status));
        }
    }

    #[test]
    fn read_head_stops_at_the_blank_line_and_limits_size() {
        let mut ok = Cursor::new(b"GET / HTTP/1.1\r\nHost: a\r\n\r\nBODY".to_vec());
        let head = read_head(&mut ok).unwrap().unwrap();
        assert_eq!(head, b"GET / HTTP/1.1\r\nHost: a\r\n\r\n");
        assert!(read_head(&mut Cursor::new(Vec::new())).unwrap().is_none());
        assert!(matches!(
            read_head(&mut Cursor::new(b"GET / HTTP/1.1\r\n".to_vec())),
            Err(HeadError::Incomplete)
        ));
        let mut big = b"GET / HTTP/1.1\r\n".to_vec();
        big.extend(std::iter::repeat_n(b'x', MAX_HEAD + 10));
        assert!(matches!(read_head(&mut Cursor::new(big)), Err(HeadError::TooLarge)));
    }

    #[test]
    fn bind_reports_bad_roots() {
        let f = Fixture::new();
        let missing = f.base.join("no-such-folder");
        let err = bind(&missing, 0).unwrap_err();
        assert!(matches!(err, ServeError::Root { .. }), "{err:?}");
        assert!(err.to_string().contains("no-such-folder"), "{err}");
        let file = f.root.join("index.html");
        let err = bind(&file, 0).unwrap_err();
        assert!(matches!(err, ServeError::RootNotDirectory { .. }), "{err:?}");
        assert!(err.to_string().contains("not a folder"), "{err}");
    }

    #[test]
    fn busy_port_is_named_in_the_error() {
        let f = Fixture::new();
        let taken = TcpListener::bind((Ipv4Addr::LOCALHOST, 0)).unwrap();
        let port = taken.local_addr().unwrap().port();
        let err = bind(&f.root, port).unwrap_err();
        assert!(matches!(err, ServeError::PortBusy { port: p } if p == port), "{err:?}");
        assert!(err.to_string().contains(&format!("port {port} ")), "{err}");
    }

    /// Sends `request` to a live server and returns everything it answered.
    fn exchange(addr: SocketAddr, request: &[u8]) -> String {
        let mut stream = TcpStream::connect(addr).unwrap();
        stream.set_read_timeout(Some(Duration::from_secs(20))).unwrap();
        stream.write_all(request).unwrap();
        let mut out = Vec::new();
        stream.read_to_end(&mut out).unwrap();
        String::from_utf8_lossy(&out).into_owned()
    }

    #[test]
    fn live_server_on_loopback_answers_and_closes() {
        let f = Fixture::new();
        let server = bind(&f.root, 0).unwrap();
        let addr = server.local_addr();
        assert!(addr.ip().is_loopback());
        assert_ne!(addr.port(), 0);
        assert_eq!(server.url(), format!("http://127.0.0.1:{}/", addr.port()));
        thread::spawn(move || server.run());

        let page = exchange(addr, b"GET / HTTP/1.1\r\nHost: 127.0.0.1\r\n\r\n");
        assert!(page.starts_with("HTTP/1.1 200 OK\r\n"), "{page}");
        assert!(page.contains("\r\nConnection: close\r\n"), "{page}");
        assert!(page.ends_with("\r\n\r\n<!doctype html><p>home</p>"), "{page}");

        let head = exchange(addr, b"HEAD /js/app.js HTTP/1.1\r\n\r\n");
        assert!(head.starts_with("HTTP/1.1 200 OK\r\n"), "{head}");
        assert!(head.contains("\r\nContent-Length: 10\r\n"), "{head}");
        assert!(head.ends_with("\r\n\r\n"), "{head}");

        let escape = exchange(addr, b"GET /../secret.txt HTTP/1.1\r\n\r\n");
        assert!(escape.starts_with("HTTP/1.1 403 Forbidden\r\n"), "{escape}");
        assert!(!escape.contains("SECRET"));

        let mut huge = b"GET / HTTP/1.1\r\nX: ".to_vec();
        huge.extend(std::iter::repeat_n(b'a', MAX_HEAD + 100));
        let big = exchange(addr, &huge);
        assert!(big.starts_with("HTTP/1.1 431 "), "{big}");

        // Several clients at once, each on its own thread.
        let clients: Vec<_> = (0..8)
            .map(|_| thread::spawn(move || exchange(addr, b"GET /style.css HTTP/1.1\r\n\r\n")))
            .collect();
        for c in clients {
            assert!(c.join().unwrap().ends_with("\r\n\r\np{}"));
        }
    }

    #[test]
    fn serve_reports_the_address_before_serving() {
        let f = Fixture::new();
        let taken = TcpListener::bind((Ipv4Addr::LOCALHOST, 0)).unwrap();
        let port = taken.local_addr().unwrap().port();
        let mut called = false;
        let err = serve(&f.root, port, |_| called = true).unwrap_err();
        assert!(!called, "ready must not be called when the port is busy");
        assert!(matches!(err, ServeError::PortBusy { .. }));

        let (tx, rx) = std::sync::mpsc::channel();
        let root = f.root.clone();
        thread::spawn(move || {
            let _ = serve(&root, 0, |url| tx.send(url.to_string()).unwrap());
        });
        let url = rx.recv_timeout(Duration::from_secs(20)).unwrap();
        let port: u16 = url
            .strip_prefix("http://127.0.0.1:")
            .and_then(|rest| rest.strip_suffix('/'))
            .and_then(|p| p.parse().ok())
            .unwrap_or_else(|| panic!("unexpected address {url}"));
        let addr = SocketAddr::from((Ipv4Addr::LOCALHOST, port));
        let page = exchange(addr, b"GET /style.css HTTP/1.1\r\n\r\n");
        assert!(page.starts_with("HTTP/1.1 200 OK\r\n"), "{page}");
    }
}
