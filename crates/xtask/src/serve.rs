//! A small static server for `dist/`, bound to 127.0.0.1 only: the page is for
//! this computer, never the network. Stops on Ctrl-C (the default action of
//! the interrupt signal; there is nothing to clean up).

use crate::bundle::SERVED_POLICY;
use crate::sh::{self, Failure, Result};
use crate::{dist, install};
use std::io::Write;
use std::path::{Component, Path, PathBuf};

/// The first port tried when none is given.
pub const DEFAULT_PORT: u16 = 8080;
/// How many ports after the default are tried.
const PORTS_TRIED: u16 = 20;

/// `cargo xtask demo`: install, build, serve.
pub fn demo(port: Option<u16>) -> Result<()> {
    install::install(install::Scope::Build)?;
    let built = dist::build()?;
    serve(port, Some(&built.single_file))
}

/// `cargo xtask serve`: serve what the last build wrote.
pub fn serve_existing(port: Option<u16>) -> Result<()> {
    let single = sh::root().join("dist/pairsight.html");
    if !sh::root().join("dist/index.html").is_file() {
        return Err(Failure::new(
            "dist/ has not been built; run `cargo xtask build` (or `cargo xtask demo`)",
        ));
    }
    serve(port, single.is_file().then_some(single.as_path()))
}

fn serve(port: Option<u16>, single: Option<&Path>) -> Result<()> {
    let dist = sh::root().join("dist");
    let (server, port) = bind(port)?;
    println!();
    println!("pairsight is served at  http://127.0.0.1:{port}/#demo");
    if let Some(p) = single {
        println!("single file (no server): {}", p.display());
    }
    println!("Ctrl-C stops the server.");
    for request in server.incoming_requests() {
        let head = *request.method() == tiny_http::Method::Head;
        let reply = answer(&dist, request.method(), request.url());
        let mut writer = request.into_writer();
        // A client that went away is not our problem; keep serving.
        let _ = writer
            .write_all(&reply.to_http(head))
            .and_then(|()| writer.flush());
    }
    Ok(())
}

/// Bind the given port, or the default one or one of the next few.
fn bind(port: Option<u16>) -> Result<(tiny_http::Server, u16)> {
    let candidates: Vec<u16> = match port {
        Some(p) => vec![p],
        None => (DEFAULT_PORT..DEFAULT_PORT + PORTS_TRIED).collect(),
    };
    let mut last = String::new();
    for p in &candidates {
        match tiny_http::Server::http(("127.0.0.1", *p)) {
            Ok(server) => {
                let actual = server.server_addr().to_ip().map_or(*p, |addr| addr.port());
                return Ok((server, actual));
            }
            Err(e) => last = e.to_string(),
        }
    }
    Err(Failure::new(format!(
        "no free port among {:?} on 127.0.0.1 ({last}); pass another with --port N",
        candidates
    )))
}

/// One response, before it is written.
#[derive(Debug, Clone, PartialEq)]
struct Reply {
    status: u16,
    content_type: &'static str,
    body: Vec<u8>,
}

impl Reply {
    fn text(status: u16, text: &str) -> Self {
        Reply {
            status,
            content_type: "text/plain; charset=utf-8",
            body: text.as_bytes().to_vec(),
        }
    }

    /// The response as HTTP/1.1 bytes. Every response closes its connection:
    /// tiny_http 0.12 gives each connection to a pool thread for as long as
    /// it stays open, and a burst of new connections (a browser opens six at
    /// once) can wait behind idle kept-alive ones indefinitely. Closed
    /// connections free their threads at once.
    fn to_http(&self, head: bool) -> Vec<u8> {
        let reason = match self.status {
            200 => "OK",
            404 => "Not Found",
            405 => "Method Not Allowed",
            _ => "",
        };
        // The policy travels as a header too: a worker loaded from a URL
        // takes its policy from its own response, not from the page's tag.
        let mut out = format!(
            "HTTP/1.1 {} {reason}\r\nContent-Type: {}\r\nContent-Length: {}\r\n\
             Content-Security-Policy: {SERVED_POLICY}\r\nX-Content-Type-Options: nosniff\r\n\
             Cache-Control: no-store\r\nConnection: close\r\n\r\n",
            self.status,
            self.content_type,
            self.body.len()
        )
        .into_bytes();
        if !head {
            out.extend_from_slice(&self.body);
        }
        out
    }
}

/// The answer to one request. Only GET and HEAD, only files inside `dist`.
fn answer(dist: &Path, method: &tiny_http::Method, url: &str) -> Reply {
    use tiny_http::Method;
    if !matches!(method, Method::Get | Method::Head) {
        return Reply::text(405, "only GET and HEAD are served");
    }
    let Some(path) = file_for(dist, url) else {
        return Reply::text(404, "not found");
    };
    match std::fs::read(&path) {
        Ok(body) => Reply {
            status: 200,
            content_type: content_type(&path),
            body,
        },
        Err(_) => Reply::text(404, "not found"),
    }
}

/// The file a URL names inside `dist`, or `None` for anything that would step
/// outside it or is not a file.
fn file_for(dist: &Path, url: &str) -> Option<PathBuf> {
    let path = url.split(['?', '#']).next().unwrap_or("");
    let decoded = percent_decode(path)?;
    let relative = decoded.trim_start_matches('/');
    let relative = if relative.is_empty() || relative.ends_with('/') {
        format!("{relative}index.html")
    } else {
        relative.to_string()
    };
    let rel = Path::new(&relative);
    if !rel.components().all(|c| matches!(c, Component::Normal(_))) {
        return None;
    }
    let full = dist.join(rel);
    full.is_file().then_some(full)
}

fn percent_decode(s: &str) -> Option<String> {
    let bytes = s.as_bytes();
    let mut out = Vec::with_capacity(bytes.len());
    let mut i = 0;
    while i < bytes.len() {
        if bytes[i] == b'%' {
            let hex = std::str::from_utf8(bytes.get(i + 1..i + 3)?).ok()?;
            out.push(u8::from_str_radix(hex, 16).ok()?);
            i += 3;
        } else {
            out.push(bytes[i]);
            i += 1;
        }
    }
    String::from_utf8(out).ok()
}

fn content_type(path: &Path) -> &'static str {
    match path.extension().and_then(|e| e.to_str()) {
        Some("html") => "text/html; charset=utf-8",
        Some("js" | "mjs") => "text/javascript; charset=utf-8",
        Some("css") => "text/css; charset=utf-8",
        Some("wasm") => "application/wasm",
        Some("json") => "application/json",
        Some("svg") => "image/svg+xml",
        Some("png") => "image/png",
        Some("csv") => "text/csv; charset=utf-8",
        _ => "application/octet-stream",
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn fixture() -> PathBuf {
        let dir = std::env::temp_dir().join(format!("xtask-serve-{}", std::process::id()));
        std::fs::create_dir_all(dir.join("sub")).unwrap();
        std::fs::write(dir.join("index.html"), "<p>hi</p>").unwrap();
        std::fs::write(dir.join("sub/a b.js"), "x").unwrap();
        dir
    }

    #[test]
    fn urls_map_to_files_inside_dist_only() {
        let dist = fixture();
        assert_eq!(file_for(&dist, "/"), Some(dist.join("index.html")));
        assert_eq!(
            file_for(&dist, "/index.html?x=1#demo"),
            Some(dist.join("index.html"))
        );
        assert_eq!(
            file_for(&dist, "/sub/a%20b.js"),
            Some(dist.join("sub/a b.js"))
        );
        assert_eq!(file_for(&dist, "/../Cargo.toml"), None);
        assert_eq!(file_for(&dist, "/sub/%2e%2e/%2e%2e/etc/passwd"), None);
        assert_eq!(file_for(&dist, "/missing.js"), None);
        assert_eq!(file_for(&dist, "/bad%zz"), None);
    }

    #[test]
    fn answers_with_policy_type_and_a_closed_connection() {
        let dist = fixture();
        let ok = answer(&dist, &tiny_http::Method::Get, "/");
        assert_eq!(
            (ok.status, ok.content_type),
            (200, "text/html; charset=utf-8")
        );
        let wire = String::from_utf8(ok.to_http(false)).unwrap();
        assert!(wire.starts_with("HTTP/1.1 200 OK\r\n"), "{wire}");
        assert!(wire.contains("\r\nContent-Length: 9\r\n"), "{wire}");
        assert!(wire.contains(&format!("\r\nContent-Security-Policy: {SERVED_POLICY}\r\n")));
        assert!(wire.contains("\r\nConnection: close\r\n"), "{wire}");
        assert!(wire.ends_with("\r\n\r\n<p>hi</p>"), "{wire}");
        let head = String::from_utf8(ok.to_http(true)).unwrap();
        assert!(head.ends_with("\r\n\r\n") && head.contains("Content-Length: 9"));
        assert_eq!(answer(&dist, &tiny_http::Method::Post, "/").status, 405);
        assert_eq!(answer(&dist, &tiny_http::Method::Get, "/nope").status, 404);
        assert_eq!(content_type(Path::new("x.wasm")), "application/wasm");
    }

    #[test]
    fn binds_loopback_and_reports_the_port() {
        let (server, port) = bind(Some(0)).expect("an ephemeral port");
        assert_ne!(port, 0);
        let ip = server.server_addr().to_ip().map(|a| a.ip());
        assert_eq!(ip, Some(std::net::IpAddr::from([127, 0, 0, 1])));
    }
}
