//! The single-file app: the page's ES modules joined into one script, the
//! style sheet, the worker and the wasm inlined into one HTML file that works
//! from disk (file://), with a Content-Security-Policy that allows exactly the
//! inlined script and style (by SHA-256 hash, CSP Level 3 "hash-source") and
//! no network connection at all.
//!
//! The module joiner is deliberately small and strict. Each module of `web/`
//! must follow these conventions, and a module that does not is an error
//! naming file and line:
//! - imports are `import { a, b as c } from './x.js';` or
//!   `import * as x from './x.js';` at the start of a line, relative paths only;
//! - exports are `export function`, `export async function`, `export const`
//!   or `export class` at the start of a line (no `export let`: a live binding
//!   would not survive joining; no `export default`, no export lists).
//!
//! Each module becomes a function scope returning its exports, placed after
//! the modules it imports, so names never collide and evaluation order is the
//! browser's own (dependencies first).

use crate::sh::{Failure, Result};
use base64::Engine as _;
use sha2::{Digest, Sha256};
use std::collections::BTreeMap;
use std::path::Path;

/// Policy of the served `dist/index.html` (development: `cargo xtask demo`).
/// It may fetch its own wasm from its own origin (`connect-src 'self'`) and
/// load its own scripts; nothing else. The shipped single file is stricter.
pub const SERVED_POLICY: &str = "default-src 'none'; script-src 'self' 'wasm-unsafe-eval'; \
style-src 'self'; img-src data: blob:; connect-src 'self'; worker-src 'self' blob:; \
base-uri 'none'; form-action 'none'";

/// Policy of the single file: only the inlined script and style (by hash),
/// compiling the inlined wasm, a worker from a blob: URL, images from data:
/// and blob: URLs; every network connection forbidden.
pub fn single_file_policy(script_hash: &str, style_hash: &str) -> String {
    format!(
        "default-src 'none'; script-src '{script_hash}' 'wasm-unsafe-eval'; style-src '{style_hash}'; \
img-src data: blob:; connect-src 'none'; worker-src blob:; base-uri 'none'; form-action 'none'"
    )
}

/// A CSP hash-source for an inline element's exact text: `sha256-<base64>`.
pub fn csp_hash(text: &str) -> String {
    let digest = Sha256::digest(text.as_bytes());
    format!(
        "sha256-{}",
        base64::engine::general_purpose::STANDARD.encode(digest)
    )
}

/// The slots of `web/index.html`, each an HTML comment on its own, each
/// exactly once, in this order of appearance for the first three.
const SLOT_CSP: &str = "<!-- pairsight:csp -->";
const SLOT_STYLE: &str = "<!-- pairsight:style -->";
const SLOT_SCRIPT: &str = "<!-- pairsight:script -->";
const SLOT_PAYLOAD: &str = "<!-- pairsight:payload -->";

fn check_slots(template: &str) -> Result<()> {
    let mut last = 0;
    for slot in [SLOT_CSP, SLOT_STYLE, SLOT_SCRIPT, SLOT_PAYLOAD] {
        let n = template.matches(slot).count();
        if n != 1 {
            return Err(Failure::new(format!(
                "web/index.html must contain `{slot}` exactly once (found {n})"
            )));
        }
        let at = template.find(slot).unwrap_or(0);
        if at < last {
            return Err(Failure::new(format!(
                "web/index.html: `{slot}` is out of order; the policy must come before the style, \
                 the script and the payload, since a policy only covers what follows it"
            )));
        }
        last = at;
    }
    Ok(())
}

fn csp_meta(policy: &str) -> String {
    format!("<meta http-equiv=\"Content-Security-Policy\" content=\"{policy}\">")
}

/// The served page: the template with a policy, a link to the style sheet and
/// the entry module.
pub fn served_page(template: &str, entry: &str) -> Result<String> {
    check_slots(template)?;
    Ok(template
        .replace(SLOT_CSP, &csp_meta(SERVED_POLICY))
        .replace(SLOT_STYLE, "<link rel=\"stylesheet\" href=\"style.css\">")
        .replace(
            SLOT_SCRIPT,
            &format!("<script type=\"module\" src=\"{entry}\"></script>"),
        )
        .replace(SLOT_PAYLOAD, ""))
}

/// What goes into the single file.
pub struct SingleFile<'a> {
    /// `web/index.html`.
    pub template: &'a str,
    /// The style sheet.
    pub css: &'a str,
    /// The joined modules (see [`join_modules`]).
    pub app_js: &'a str,
    /// The worker: wasm-bindgen's glue followed by `web/worker.js`.
    pub worker_js: &'a str,
    /// The optimised wasm.
    pub wasm: &'a [u8],
}

/// Element ids the page looks for to know it is the single file.
pub const WORKER_ID: &str = "pairsight-worker";
/// See [`WORKER_ID`].
pub const WASM_ID: &str = "pairsight-wasm";

/// The single self-contained HTML file.
pub fn single_file(parts: &SingleFile<'_>) -> Result<String> {
    check_slots(parts.template)?;
    let css = parts.css;
    if css.to_ascii_lowercase().contains("</style") {
        return Err(Failure::new(
            "style.css contains `</style`, which would end the inlined style early",
        ));
    }
    let app = inline_js(parts.app_js, "the page's modules")?;
    let worker = inline_js(parts.worker_js, "the worker")?;
    let wasm = base64::engine::general_purpose::STANDARD.encode(parts.wasm);
    let policy = single_file_policy(&csp_hash(&app), &csp_hash(css));
    // The payload elements are data, not scripts: a non-JavaScript type is
    // never executed, so the policy need not (and does not) allow them.
    let payload = format!(
        "<script type=\"text/plain\" id=\"{WORKER_ID}\">{worker}</script>\n\
         <script type=\"application/octet-stream\" data-encoding=\"base64\" id=\"{WASM_ID}\">{wasm}</script>"
    );
    Ok(parts
        .template
        .replace(SLOT_CSP, &csp_meta(&policy))
        .replace(SLOT_STYLE, &format!("<style>{css}</style>"))
        .replace(
            SLOT_SCRIPT,
            &format!("<script type=\"module\">{app}</script>"),
        )
        .replace(SLOT_PAYLOAD, &payload))
}

/// JavaScript made safe to sit inside a `<script>` element: `</script` would
/// end it early, so it is written `<\/script` (the same string to JavaScript,
/// in strings, templates, regular expressions and comments alike).
fn inline_js(js: &str, what: &str) -> Result<String> {
    if js.contains("<!--") {
        return Err(Failure::new(format!(
            "{what} contains `<!--`, which changes how HTML parses an inline script; write it differently"
        )));
    }
    let mut out = String::with_capacity(js.len());
    let mut rest = js;
    while let Some(at) = find_ascii_ci(rest, "</script") {
        out.push_str(&rest[..at]);
        out.push_str("<\\/");
        rest = &rest[at + 2..];
    }
    out.push_str(rest);
    Ok(out)
}

fn find_ascii_ci(hay: &str, needle: &str) -> Option<usize> {
    hay.as_bytes()
        .windows(needle.len())
        .position(|w| w.eq_ignore_ascii_case(needle.as_bytes()))
}

/// One parsed module.
#[derive(Debug, Clone, PartialEq)]
struct Module {
    imports: Vec<Import>,
    exports: Vec<String>,
    body: String,
}

/// One import statement: bindings (exported name, local name) from a module,
/// or the whole module under a namespace name.
#[derive(Debug, Clone, PartialEq)]
enum Import {
    Names {
        from: String,
        names: Vec<(String, String)>,
    },
    Namespace {
        from: String,
        local: String,
    },
}

impl Import {
    fn from(&self) -> &str {
        match self {
            Import::Names { from, .. } | Import::Namespace { from, .. } => from,
        }
    }
}

/// Join the modules reachable from `entry` (a path relative to `dir`) into one
/// script.
pub fn join_modules(dir: &Path, entry: &str) -> Result<String> {
    let mut read = |path: &str| {
        let full = dir.join(path);
        std::fs::read_to_string(&full)
            .map_err(|e| Failure::new(format!("cannot read web/{path}: {e}")))
    };
    join_with(entry, &mut read)
}

fn join_with(entry: &str, read: &mut dyn FnMut(&str) -> Result<String>) -> Result<String> {
    let mut modules = BTreeMap::new();
    let mut order = Vec::new();
    visit(entry, read, &mut modules, &mut Vec::new(), &mut order)?;
    let mut out = String::new();
    for path in &order {
        let Some(m) = modules.get(path) else { continue };
        out.push_str(&format!(
            "// ---- {path}\nconst {} = (() => {{\n",
            var_name(path)
        ));
        for import in &m.imports {
            match import {
                Import::Names { from, names } => {
                    let list: Vec<String> = names
                        .iter()
                        .map(|(name, local)| {
                            if name == local {
                                name.clone()
                            } else {
                                format!("{name}: {local}")
                            }
                        })
                        .collect();
                    out.push_str(&format!(
                        "const {{ {} }} = {};\n",
                        list.join(", "),
                        var_name(from)
                    ));
                }
                Import::Namespace { from, local } => {
                    out.push_str(&format!("const {local} = {};\n", var_name(from)));
                }
            }
        }
        out.push_str(&m.body);
        out.push_str(&format!("return {{ {} }};\n}})();\n", m.exports.join(", ")));
    }
    Ok(out)
}

fn visit(
    path: &str,
    read: &mut dyn FnMut(&str) -> Result<String>,
    modules: &mut BTreeMap<String, Module>,
    stack: &mut Vec<String>,
    order: &mut Vec<String>,
) -> Result<()> {
    if modules.contains_key(path) {
        return Ok(());
    }
    if let Some(at) = stack.iter().position(|p| p == path) {
        let mut cycle = stack[at..].to_vec();
        cycle.push(path.to_string());
        return Err(Failure::new(format!(
            "web/: modules import each other in a circle ({}); move the shared part into its own module",
            cycle.join(" -> ")
        )));
    }
    let module = parse_module(path, &read(path)?)?;
    stack.push(path.to_string());
    for import in &module.imports {
        visit(import.from(), read, modules, stack, order)?;
    }
    stack.pop();
    modules.insert(path.to_string(), module);
    order.push(path.to_string());
    Ok(())
}

fn var_name(path: &str) -> String {
    let tail: String = path
        .chars()
        .map(|c| if c.is_ascii_alphanumeric() { c } else { '_' })
        .collect();
    format!("module_{tail}")
}

/// `to` relative to the folder of `from` ("screens/data.js" + "../dom.js" ->
/// "dom.js").
fn resolve(from: &str, to: &str) -> Option<String> {
    if !(to.starts_with("./") || to.starts_with("../")) {
        return None;
    }
    let mut parts: Vec<&str> = from.split('/').collect();
    parts.pop();
    for seg in to.split('/') {
        match seg {
            "." => {}
            ".." => {
                parts.pop()?;
            }
            s => parts.push(s),
        }
    }
    Some(parts.join("/"))
}

fn parse_module(path: &str, text: &str) -> Result<Module> {
    let err = |line: usize, msg: &str| Failure::new(format!("web/{path}:{line}: {msg}"));
    let mut imports = Vec::new();
    let mut exports = Vec::new();
    let mut body = String::new();
    let mut lines = text.lines().enumerate();
    while let Some((i, line)) = lines.next() {
        let n = i + 1;
        if line.starts_with("import ") || line.starts_with("import{") {
            let mut stmt = line.to_string();
            while !stmt.trim_end().ends_with(';') {
                match lines.next() {
                    Some((_, more)) => {
                        stmt.push(' ');
                        stmt.push_str(more);
                    }
                    None => return Err(err(n, "import statement never ends (end it with `;`)")),
                }
            }
            let import = parse_import(&stmt).ok_or_else(|| {
                err(
                    n,
                    "use `import { a, b as c } from './x.js';` or `import * as x from './x.js';`",
                )
            })?;
            let target = resolve(path, import.from()).ok_or_else(|| {
                err(
                    n,
                    "imports must use a relative path (`./` or `../`) inside web/",
                )
            })?;
            imports.push(match import {
                Import::Names { names, .. } => Import::Names {
                    from: target,
                    names,
                },
                Import::Namespace { local, .. } => Import::Namespace {
                    from: target,
                    local,
                },
            });
            // Keep line numbers of the body equal to the source's.
            body.push('\n');
            continue;
        }
        if let Some(rest) = line.strip_prefix("export ") {
            let name = ["function ", "async function ", "const ", "class "]
                .iter()
                .find_map(|kw| rest.strip_prefix(kw))
                .map(|after| {
                    after
                        .trim_start_matches('*')
                        .trim_start()
                        .chars()
                        .take_while(|c| c.is_ascii_alphanumeric() || *c == '_' || *c == '$')
                        .collect::<String>()
                })
                .filter(|name| !name.is_empty())
                .ok_or_else(|| {
                    err(
                        n,
                        "export with `export function`, `export async function`, `export const` or `export class` \
                         followed by a name (no `export let`, `export default` or export lists)",
                    )
                })?;
            exports.push(name);
            body.push_str(rest);
            body.push('\n');
            continue;
        }
        body.push_str(line);
        body.push('\n');
    }
    Ok(Module {
        imports,
        exports,
        body,
    })
}

fn parse_import(stmt: &str) -> Option<Import> {
    let rest = stmt.trim().strip_prefix("import")?.trim_start();
    let (what, from) = rest.split_once(" from ")?;
    let from = from.trim().strip_suffix(';')?.trim();
    let quote = from.chars().next().filter(|c| *c == '\'' || *c == '"')?;
    let from = from.strip_prefix(quote)?.strip_suffix(quote)?.to_string();
    let what = what.trim();
    if let Some(ns) = what.strip_prefix("* as ") {
        let local = ns.trim();
        return is_ident(local).then(|| Import::Namespace {
            from,
            local: local.to_string(),
        });
    }
    let inner = what.strip_prefix('{')?.strip_suffix('}')?;
    let mut names = Vec::new();
    for item in inner.split(',').map(str::trim).filter(|s| !s.is_empty()) {
        let (name, local) = match item.split_once(" as ") {
            Some((a, b)) => (a.trim(), b.trim()),
            None => (item, item),
        };
        if !is_ident(name) || !is_ident(local) {
            return None;
        }
        names.push((name.to_string(), local.to_string()));
    }
    Some(Import::Names { from, names })
}

fn is_ident(s: &str) -> bool {
    let mut chars = s.chars();
    chars
        .next()
        .is_some_and(|c| c.is_ascii_alphabetic() || c == '_' || c == '$')
        && chars.all(|c| c.is_ascii_alphanumeric() || c == '_' || c == '$')
}

#[cfg(test)]
mod tests {
    use super::*;

    fn join(files: &[(&str, &str)], entry: &str) -> Result<String> {
        let map: BTreeMap<String, String> = files
            .iter()
            .map(|(p, t)| (p.to_string(), t.to_string()))
            .collect();
        join_with(entry, &mut |p| {
            map.get(p)
                .cloned()
                .ok_or_else(|| Failure::new(format!("missing {p}")))
        })
    }

    #[test]
    fn dependencies_come_first_and_imports_become_bindings() {
        let out = join(
            &[
                ("main.js", "import { el, text as t } from './dom.js';\nimport * as screens from './screens/data.js';\nel(t);\n"),
                ("dom.js", "export function el() {}\nexport const text = 1;\n"),
                ("screens/data.js", "import { el } from '../dom.js';\nexport async function mount() { el(); }\n"),
            ],
            "main.js",
        )
        .unwrap();
        let dom = out.find("// ---- dom.js").unwrap();
        let data = out.find("// ---- screens/data.js").unwrap();
        let main = out.find("// ---- main.js").unwrap();
        assert!(dom < data && data < main, "{out}");
        assert_eq!(
            out.matches("// ---- dom.js").count(),
            1,
            "imported twice, joined once"
        );
        assert!(
            out.contains("const { el, text: t } = module_dom_js;"),
            "{out}"
        );
        assert!(
            out.contains("const screens = module_screens_data_js;"),
            "{out}"
        );
        assert!(out.contains("return { el, text };"), "{out}");
        assert!(out.contains("async function mount()"), "{out}");
        assert!(!out.contains("export "), "{out}");
        assert!(!out.contains("import "), "{out}");
    }

    #[test]
    fn multi_line_imports() {
        let out = join(
            &[
                ("a.js", "import {\n  x,\n  y,\n} from './b.js';\nx(y);\n"),
                ("b.js", "export const x = 1;\nexport const y = 2;\n"),
            ],
            "a.js",
        )
        .unwrap();
        assert!(out.contains("const { x, y } = module_b_js;"), "{out}");
    }

    #[test]
    fn unsupported_forms_name_file_and_line() {
        let cases = [
            ("export let x = 1;\n", "a.js:1"),
            ("let a;\nexport default a;\n", "a.js:2"),
            ("const a = 1;\nexport { a };\n", "a.js:2"),
            ("import x from './b.js';\n", "a.js:1"),
            ("import { x } from 'lib';\n", "relative path"),
            ("import { x } from './b.js'\n", "never ends"),
        ];
        for (src, want) in cases {
            let e = join(&[("a.js", src), ("b.js", "export const x = 1;\n")], "a.js").unwrap_err();
            assert!(e.to_string().contains(want), "{src:?}: {e}");
        }
    }

    #[test]
    fn circles_are_refused() {
        let e = join(
            &[
                ("a.js", "import { b } from './b.js';\nexport const a = 1;\n"),
                ("b.js", "import { a } from './a.js';\nexport const b = 2;\n"),
            ],
            "a.js",
        )
        .unwrap_err();
        assert!(e.to_string().contains("a.js -> b.js -> a.js"), "{e}");
    }

    #[test]
    fn paths_resolve_inside_web() {
        assert_eq!(
            resolve("screens/data.js", "../dom.js").as_deref(),
            Some("dom.js")
        );
        assert_eq!(
            resolve("main.js", "./screens/x.js").as_deref(),
            Some("screens/x.js")
        );
        assert_eq!(resolve("main.js", "../../etc.js"), None);
        assert_eq!(resolve("main.js", "/abs.js"), None);
    }

    #[test]
    fn csp_hash_matches_a_known_digest() {
        // SHA-256 of "abc" is FIPS 180-2 Appendix B.1's first example:
        // ba7816bf 8f01cfea 414140de 5dae2223 b00361a3 96177a9c b410ff61 f20015ad.
        assert_eq!(
            csp_hash("abc"),
            "sha256-ungWv48Bz+pBQUDeXa4iI7ADYaOWF3qctBD/YfIAFa0="
        );
    }

    const TEMPLATE: &str = "<head><!-- pairsight:csp -->\n<!-- pairsight:style -->\n<!-- pairsight:script --></head><body><!-- pairsight:payload --></body>";

    #[test]
    fn single_file_inlines_everything_and_hashes_what_runs() {
        let html = single_file(&SingleFile {
            template: TEMPLATE,
            css: "body{color:red}",
            app_js: "const s = '</script>';",
            worker_js: "let w = 1;",
            wasm: &[0, 97, 115, 109],
        })
        .unwrap();
        let app = "const s = '<\\/script>';";
        assert!(
            html.contains(&format!("<script type=\"module\">{app}</script>")),
            "{html}"
        );
        assert!(html.contains(&csp_hash(app)));
        assert!(html.contains(&csp_hash("body{color:red}")));
        assert!(html.contains("connect-src 'none'"));
        assert!(html.contains("'wasm-unsafe-eval'"));
        assert!(
            html.contains(">AGFzbQ==</script>"),
            "wasm as base64: {html}"
        );
        assert!(!html.contains("pairsight:"), "all slots filled: {html}");
        assert!(
            !html.contains("src="),
            "nothing loaded from elsewhere: {html}"
        );
    }

    #[test]
    fn template_slots_are_checked() {
        assert!(served_page("<!-- pairsight:csp -->", "main.js").is_err());
        let swapped = TEMPLATE
            .replace("<!-- pairsight:csp -->", "@")
            .replace("<!-- pairsight:style -->", "<!-- pairsight:csp -->")
            .replace('@', "<!-- pairsight:style -->");
        let e = served_page(&swapped, "main.js").unwrap_err();
        assert!(e.to_string().contains("out of order"), "{e}");
        let page = served_page(TEMPLATE, "main.js").unwrap();
        assert!(page.contains("src=\"main.js\"") && page.contains("href=\"style.css\""));
        assert!(page.contains(SERVED_POLICY));
    }

    #[test]
    fn inline_comment_opener_is_refused() {
        assert!(inline_js("x = '<!--';", "t").is_err());
        assert_eq!(inline_js("a</SCRIPT>b", "t").unwrap(), "a<\\/SCRIPT>b");
    }
}
