//! Text helpers shared by the report, the rating packet and the command
//! line: one escaping rule for HTML, one for JSON inside a script block, and
//! readable numbers for people (the output files use [`crate::output::num`]).

/// Escape text for HTML element content and for double- or single-quoted
/// attribute values: `&`, `<`, `>`, `"` and `'` become character
/// references, which is enough for both contexts (OWASP Cross Site
/// Scripting Prevention Cheat Sheet, rules 1 and 2, with quoted
/// attributes). Every value that comes from the data goes through this.
/// NUL, which HTML parsers replace or drop, becomes U+FFFD so the escaped
/// text shows what the parser will show.
pub fn escape_html(text: &str) -> String {
    let mut out = String::with_capacity(text.len() + text.len() / 8);
    for c in text.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            '\0' => out.push('\u{FFFD}'),
            c => out.push(c),
        }
    }
    out
}

/// JSON text made safe to sit inside `<script type="application/json">`:
/// `<`, `>` and `&` become `\u003c`, `\u003e` and `\u0026`, so neither
/// `</script>` nor `<!--` in a note can end or change the block, and U+2028
/// and U+2029 are escaped for older JavaScript parsers. The result is still
/// JSON with the same value (RFC 8259 section 7 allows any character as a
/// `\u` escape inside a string, and these characters only occur inside
/// strings of serialized JSON).
pub fn script_json(json: &str) -> String {
    let mut out = String::with_capacity(json.len() + 16);
    for c in json.chars() {
        match c {
            '<' => out.push_str("\\u003c"),
            '>' => out.push_str("\\u003e"),
            '&' => out.push_str("\\u0026"),
            '\u{2028}' => out.push_str("\\u2028"),
            '\u{2029}' => out.push_str("\\u2029"),
            c => out.push(c),
        }
    }
    out
}

/// A number with a fixed number of decimals for people to read; "undefined"
/// when it is not finite, and never "-0.000".
pub fn fixed(x: f64, decimals: usize) -> String {
    if !x.is_finite() {
        return "undefined".to_string();
    }
    let s = format!("{x:.decimals$}");
    if s.starts_with('-') && s[1..].chars().all(|c| c == '0' || c == '.') {
        s[1..].to_string()
    } else {
        s
    }
}

/// An optional number with [`fixed`]; `None` reads "undefined".
pub fn fixed_opt(x: Option<f64>, decimals: usize) -> String {
    x.map_or_else(|| "undefined".to_string(), |v| fixed(v, decimals))
}

/// A p-value for people: three decimals, or "< 0.001" (a common practice
/// in medical journals' reporting guidance).
pub fn p_text(p: f64) -> String {
    if !p.is_finite() {
        "undefined".to_string()
    } else if p < 0.001 {
        "< 0.001".to_string()
    } else {
        format!("{p:.3}")
    }
}

/// An interval "low to high" with [`fixed`].
pub fn interval(low: f64, high: f64, decimals: usize) -> String {
    format!("{} to {}", fixed(low, decimals), fixed(high, decimals))
}

/// A confidence level as a percentage, e.g. 0.95 -> "95%".
pub fn percent_level(level: f64) -> String {
    let p = level * 100.0;
    if (p - p.round()).abs() < 1e-9 {
        format!("{}%", p.round())
    } else {
        format!("{}%", fixed(p, 1))
    }
}

/// Standard base64 with padding (RFC 4648, section 4).
pub fn base64(bytes: &[u8]) -> String {
    const A: &[u8; 64] = b"ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/";
    let mut out = String::with_capacity(bytes.len().div_ceil(3) * 4);
    for chunk in bytes.chunks(3) {
        let b = [
            chunk[0],
            chunk.get(1).copied().unwrap_or(0),
            chunk.get(2).copied().unwrap_or(0),
        ];
        let n = (u32::from(b[0]) << 16) | (u32::from(b[1]) << 8) | u32::from(b[2]);
        for (i, shift) in [18u32, 12, 6, 0].iter().enumerate() {
            if i <= chunk.len() {
                out.push(A[((n >> shift) & 63) as usize] as char);
            } else {
                out.push('=');
            }
        }
    }
    out
}

/// The Content-Security-Policy source expression that allows exactly this
/// inline script or style: `'sha256-<base64 of the SHA-256 digest>'` of its
/// UTF-8 text (W3C, Content Security Policy Level 3, section 8.4;
/// SHA-256 from FIPS 180-4).
pub fn csp_hash(text: &str) -> String {
    use sha2::{Digest, Sha256};
    format!("'sha256-{}'", base64(&Sha256::digest(text.as_bytes())))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn markup_and_script_payloads_are_inert() {
        let payloads = [
            "<script>alert(1)</script>",
            "\"><img src=x onerror=alert(1)>",
            "'><svg onload=alert(1)>",
            "</textarea><script>alert(1)</script>",
            "</title></style></pre><b>x</b>",
            "<!-- comment --> <![CDATA[x]]>",
            "javascript:alert(1)",
            "&lt;already escaped&gt;",
        ];
        for p in payloads {
            let e = escape_html(p);
            assert!(!e.contains('<') && !e.contains('>'), "{e}");
            assert!(!e.contains('"') && !e.contains('\''), "{e}");
            // Every & starts one of our references, so decoding gives p back.
            let back = e
                .replace("&lt;", "<")
                .replace("&gt;", ">")
                .replace("&quot;", "\"")
                .replace("&#39;", "'")
                .replace("&amp;", "&");
            assert_eq!(back, p);
        }
        // A javascript: URL stays text: no markup character to escape, and
        // nothing in the report ever puts data into an href or src.
        assert_eq!(escape_html("javascript:alert(1)"), "javascript:alert(1)");
        assert_eq!(escape_html("a\0b"), "a\u{FFFD}b");
        assert_eq!(escape_html("Straße, 東京"), "Straße, 東京");
    }

    #[test]
    fn script_json_cannot_close_the_block_and_keeps_its_value() {
        let note = "ends here </script><script>alert(1)</script> <!-- & \u{2028}";
        let json = serde_json::to_string(&note).unwrap();
        let safe = script_json(&json);
        assert!(!safe.contains('<') && !safe.contains('>') && !safe.contains('&'));
        assert!(!safe.to_lowercase().contains("</script"));
        let back: String = serde_json::from_str(&safe).unwrap();
        assert_eq!(back, note);
    }

    #[test]
    fn base64_and_csp_hash_match_published_vectors() {
        // RFC 4648 section 10 test vectors.
        for (i, o) in [
            ("", ""),
            ("f", "Zg=="),
            ("fo", "Zm8="),
            ("foo", "Zm9v"),
            ("foob", "Zm9vYg=="),
            ("fooba", "Zm9vYmE="),
            ("foobar", "Zm9vYmFy"),
        ] {
            assert_eq!(base64(i.as_bytes()), o);
        }
        // SHA-256 of "abc" (FIPS 180-4 example, NIST CSRC "SHA256.pdf"):
        // ba7816bf 8f01cfea 414140de 5dae2223 b00361a3 96177a9c b410ff61 f20015ad,
        // whose base64 is below (checked with Python's hashlib and base64).
        assert_eq!(
            csp_hash("abc"),
            "'sha256-ungWv48Bz+pBQUDeXa4iI7ADYaOWF3qctBD/YfIAFa0='"
        );
    }

    #[test]
    fn readable_numbers() {
        assert_eq!(fixed(-0.0001, 3), "0.000");
        assert_eq!(fixed(-0.25, 2), "-0.25");
        assert_eq!(fixed(f64::NAN, 2), "undefined");
        assert_eq!(fixed_opt(None, 2), "undefined");
        assert_eq!(p_text(0.0004), "< 0.001");
        assert_eq!(p_text(0.0456), "0.046");
        assert_eq!(interval(-0.08, 0.01, 3), "-0.080 to 0.010");
        assert_eq!(percent_level(0.95), "95%");
        assert_eq!(percent_level(0.975), "97.5%");
    }
}
