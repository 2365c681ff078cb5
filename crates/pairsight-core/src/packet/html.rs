//! The packet's HTML: a fixed page of our own, the round's data as JSON in a
//! non-executable block, and the inline code that rates, allowed by hash.

use super::PacketContent;
use crate::report::{csp_hash, escape_html, script_json};
use crate::Result;
use serde::Serialize;
use std::fmt::Write as _;

/// The packet's script (inline, allowed by its hash).
pub const PACKET_SCRIPT: &str = include_str!("packet.js");
/// The packet's style sheet (inline, allowed by its hash).
pub const PACKET_STYLE: &str = include_str!("packet.css");

/// The JSON the script reads: only what it needs to show and export.
#[derive(Serialize)]
struct ScriptData<'a> {
    round: &'a str,
    reviewer: &'a str,
    scale: ScaleData,
    fields: &'a [String],
    pairs: &'a [super::PacketPair],
    marks_on: bool,
}

#[derive(Serialize)]
struct ScaleData {
    min: i64,
    max: i64,
}

/// The packet of one reviewer as a self-contained HTML page.
pub fn packet_html(c: &PacketContent) -> Result<String> {
    c.scale.validate()?;
    let data = ScriptData {
        round: &c.round,
        reviewer: &c.reviewer,
        scale: ScaleData {
            min: c.scale.min,
            max: c.scale.max,
        },
        fields: &c.fields,
        pairs: &c.pairs,
        marks_on: c.marks_on,
    };
    let json = serde_json::to_string(&data)
        .map_err(|e| crate::Error::compute(format!("could not write the packet data: {e}")))?;
    let e = escape_html;
    let n = c.pairs.len();
    let mut h = String::with_capacity(json.len() + PACKET_SCRIPT.len() + 8192);
    let csp = format!(
        "default-src 'none'; script-src {}; style-src {}; img-src 'none'; connect-src 'none'; base-uri 'none'; form-action 'none'",
        csp_hash(PACKET_SCRIPT),
        csp_hash(PACKET_STYLE)
    );
    let _ = write!(
        h,
        "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n\
         <meta http-equiv=\"Content-Security-Policy\" content=\"{}\">\n\
         <meta name=\"referrer\" content=\"no-referrer\">\n\
         <meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n\
         <meta name=\"generator\" content=\"pairsight {}\">\n\
         <title>{} · {}</title>\n<style>{}</style>\n</head>\n<body>\n",
        // Our own text (keywords and base64 hashes): no quote to escape.
        csp,
        e(crate::VERSION),
        e(&c.title),
        e(&c.reviewer),
        PACKET_STYLE
    );
    let _ = write!(
        h,
        "<header>\n<h1>{}</h1>\n<p class=\"meta\">Reviewer <strong>{}</strong> · round <code>{}</code> · {} pairs</p>\n</header>\n",
        e(&c.title),
        e(&c.reviewer),
        e(&c.round),
        n
    );
    h.push_str("<section class=\"brief\" aria-label=\"Instructions\">\n");
    if !c.instructions.trim().is_empty() {
        let _ = writeln!(h, "<p>{}</p>", e(c.instructions.trim()));
    }
    let keys = if c.scale.max <= 9 && c.scale.min >= 0 {
        format!("press {} to {} to rate, ", c.scale.min, c.scale.max)
    } else {
        String::new()
    };
    let _ = writeln!(
        h,
        "<p>Each screen shows the notes of two patients. Read both and rate how alike the two patients are, using the scale below the notes: {keys}\
         the arrow keys (or n and p) move between pairs, u jumps to the next unrated pair. You can change a rating at any time.</p>\n\
         <p>You will not be told which patient received the intervention or how the pair was chosen; please rate only how alike they are. \
         You may stop at any time: your ratings stay in this browser on this computer and come back when you open this same file again. \
         When you have finished, press <strong>Export ratings</strong> and send the saved ratings file (not this packet) to the study team.</p>\n\
         <p class=\"caution\">This file holds confidential patient information. Open it only where your organisation allows for this study, do not copy or forward it, \
         and delete it when the study team asks. Follow local research-ethics and data-governance rules. Your ratings support the review of a study design; \
         they are not judgments about any patient's care. In comments, describe what drove your rating without copying patient details.</p>"
    );
    h.push_str("<p id=\"storage-warning\" class=\"warn\" hidden>This browser does not let the packet keep your ratings. Rate in one sitting and export before closing.</p>\n");
    h.push_str("</section>\n<noscript><p class=\"warn\">This packet needs JavaScript to record ratings. Open it in a current web browser with scripts allowed for local files.</p></noscript>\n");

    h.push_str("<div id=\"app\" hidden>\n<div class=\"bar\">\n");
    let _ = writeln!(
        h,
        "<span id=\"progress-text\">0 of {n} rated</span> <progress id=\"progress\" max=\"{}\" value=\"0\"></progress>\n\
         <span id=\"position\"></span> <span>pair key <code id=\"pair-key\"></code></span>\n\
         <label><input type=\"checkbox\" id=\"marks-toggle\"> mark concept terms</label>\n\
         <span class=\"legend\"><mark class=\"pos\">term</mark> mentioned · <mark class=\"neg\">term</mark> negated</span>",
        n.max(1)
    );
    h.push_str("</div>\n<div class=\"pair\">\n");
    for (side, label) in [("left", "Patient A"), ("right", "Patient B")] {
        let _ = writeln!(
            h,
            "<article class=\"side\" aria-label=\"{label}\">\n<h2>{label}</h2>\n<dl class=\"fields\" id=\"fields-{side}\"></dl>\n<div class=\"note\" id=\"note-{side}\"></div>\n</article>"
        );
    }
    h.push_str("</div>\n<fieldset class=\"scale\">\n<legend>How alike are these two patients?</legend>\n<div class=\"points\">\n");
    for (i, anchor) in c.scale.anchors.iter().enumerate() {
        let v = c.scale.min + i as i64;
        let _ = writeln!(
            h,
            "<button type=\"button\" class=\"point\" data-value=\"{v}\" aria-pressed=\"false\"><span class=\"num\">{v}</span><span class=\"anchor\">{}</span></button>",
            e(anchor)
        );
    }
    h.push_str("</div>\n</fieldset>\n");
    if c.scale.allow_comment {
        h.push_str("<label class=\"comment\">Comment (optional; what drove your rating, without patient details)<textarea id=\"comment\" rows=\"2\" maxlength=\"2000\"></textarea></label>\n");
    }
    h.push_str(
        "<div class=\"nav\">\n<button type=\"button\" id=\"prev\">&#8592; Previous</button>\n\
         <button type=\"button\" id=\"next\">Next &#8594;</button>\n\
         <button type=\"button\" id=\"next-unrated\">Next unrated</button>\n\
         <button type=\"button\" id=\"export\" class=\"primary\">Export ratings</button>\n</div>\n\
         <p id=\"status\" role=\"status\" aria-live=\"polite\"></p>\n</div>\n",
    );
    let _ = write!(
        h,
        "<script type=\"application/json\" id=\"packet-data\">{}</script>\n<script>{}</script>\n</body>\n</html>\n",
        script_json(&json),
        PACKET_SCRIPT
    );
    Ok(h)
}
