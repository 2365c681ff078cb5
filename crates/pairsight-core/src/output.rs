//! Writing output text the same way everywhere: numbers formatted
//! deterministically, CSV cells made safe for spreadsheets, JSON pretty-printed.

use crate::{Error, Result};

/// Format a number with up to 10 significant digits, no trailing zeros, and
/// `NA` for a value that is undefined (non-finite). Ten digits keep every
/// statistic far beyond its precision while making the text independent of
/// last-bit differences in floating-point libraries.
pub fn num(x: f64) -> String {
    if !x.is_finite() {
        return "NA".to_string();
    }
    if x == 0.0 {
        return "0".to_string();
    }
    let digits = 10i32;
    // The decimal exponent from exact formatting, not from log10, whose last
    // bit may differ between platforms' maths libraries.
    let sci = format!("{:e}", x.abs());
    let magnitude: i32 = sci
        .split_once('e')
        .and_then(|(_, e)| e.parse().ok())
        .unwrap_or(0);
    if !(-6..15).contains(&magnitude) {
        // Very small or very large: scientific notation, 10 significant digits.
        let s = format!("{x:.9e}");
        let (mantissa, exp) = s.split_once('e').unwrap_or((&s, "0"));
        let mantissa = mantissa.trim_end_matches('0').trim_end_matches('.');
        return format!("{mantissa}e{exp}");
    }
    let decimals = (digits - 1 - magnitude).clamp(0, 17) as usize;
    let mut s = format!("{x:.decimals$}");
    if s.contains('.') {
        while s.ends_with('0') {
            s.pop();
        }
        if s.ends_with('.') {
            s.pop();
        }
    }
    if s == "-0" {
        s = "0".to_string();
    }
    s
}

/// Format an optional number; `None` is `NA`.
pub fn opt(x: Option<f64>) -> String {
    x.map_or_else(|| "NA".to_string(), num)
}

/// Characters that make a spreadsheet treat a cell as a formula.
fn is_trigger(c: char) -> bool {
    matches!(c, '=' | '+' | '-' | '@' | '\t' | '\r')
}

/// Neutralise a cell a spreadsheet would run as a formula (one starting with
/// `=`, `+`, `-`, `@`, tab or carriage return) by prefixing an apostrophe, the
/// usual guard against CSV injection (OWASP, "CSV Injection"). A cell that
/// already starts with an apostrophe before such a character (or before
/// another apostrophe) gains one more, so [`restore_cell`] undoes this
/// exactly. Numbers are written by [`num`] and never pass through here, so
/// "-0.5" stays a number. Every CSV writer passes text cells through this.
pub fn safe_cell(cell: &str) -> String {
    let mut chars = cell.chars();
    let needs = match chars.next() {
        Some(c) if is_trigger(c) => true,
        Some('\'') => matches!(chars.next(), Some(c) if is_trigger(c) || c == '\''),
        _ => false,
    };
    if needs {
        format!("'{cell}")
    } else {
        cell.to_string()
    }
}

/// Undo [`safe_cell`]: `restore_cell(&safe_cell(s)) == s` for every string.
pub fn restore_cell(cell: &str) -> String {
    let mut chars = cell.chars();
    if chars.next() == Some('\'') {
        if let Some(c) = chars.next() {
            if is_trigger(c) || c == '\'' {
                return cell[1..].to_string();
            }
        }
    }
    cell.to_string()
}

/// Build CSV text: a header and rows of already formatted cells. Text cells
/// should go through [`safe_cell`]; quoting is left to the csv crate.
pub fn csv_text(header: &[&str], rows: impl IntoIterator<Item = Vec<String>>) -> Result<String> {
    let mut w = csv::WriterBuilder::new()
        .terminator(csv::Terminator::Any(b'\n'))
        .from_writer(Vec::new());
    let fail = |e: csv::Error| Error::compute(format!("could not write CSV: {e}"));
    w.write_record(header).map_err(fail)?;
    for row in rows {
        w.write_record(&row).map_err(fail)?;
    }
    let bytes = w
        .into_inner()
        .map_err(|e| Error::compute(format!("could not write CSV: {e}")))?;
    String::from_utf8(bytes).map_err(|e| Error::compute(format!("could not write CSV: {e}")))
}

/// Pretty JSON with a final newline.
pub fn json<T: serde::Serialize>(value: &T) -> Result<String> {
    serde_json::to_string_pretty(value)
        .map(|s| s + "\n")
        .map_err(|e| Error::compute(format!("could not write JSON: {e}")))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn numbers() {
        assert_eq!(num(0.1 + 0.2), "0.3");
        assert_eq!(num(1794.0), "1794");
        assert_eq!(num(-0.000123456789123), "-0.0001234567891");
        assert_eq!(num(123456789012.7), "123456789013");
        assert_eq!(num(1e-300), "1e-300");
        assert_eq!(num(-1.25e-20), "-1.25e-20");
        assert_eq!(num(2.5e-7), "2.5e-7");
        assert_eq!(num(2.5e-6), "0.0000025");
        assert_eq!(num(f64::NAN), "NA");
        assert_eq!(num(-0.0), "0");
        assert_eq!(opt(None), "NA");
    }

    #[test]
    fn formula_cells_are_neutralised() {
        for bad in ["=SUM(A1)", "+1", "-2+3", "@cmd", "\tx"] {
            assert!(safe_cell(bad).starts_with('\''), "{bad}");
        }
        assert_eq!(safe_cell("P00012"), "P00012");
    }

    #[test]
    fn csv_quotes_when_needed() {
        let t = csv_text(&["a", "b"], vec![vec!["x,y".into(), "1".into()]]).unwrap();
        assert_eq!(t, "a,b\n\"x,y\",1\n");
    }
}
