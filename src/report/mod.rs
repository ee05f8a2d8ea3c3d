//! Writers: each turns a computed result into bytes; the caller picks the destination.

pub mod breakpoints;
pub mod check;
pub mod gaugings;
pub mod hydrograph;
pub mod plot;
pub mod rating;
pub mod section;
pub mod sheet;
pub mod structures;
pub mod tailwater;

/// The cautions printed with every rating (design.md, "Cautions shown to users").
pub const CAUTIONS: &str = "CAUTION: a rating computed from dimensions is only as good as the survey and the \
structure's condition. Confirm it by field gaugings before use; keep the structure clean and the approach free \
of weed and sediment; follow local codes, the owner's safety rules for working in flowing water, and licensed \
professional practice where flows are used for compliance, billing or water rights.";

/// Formats `v` with `n` significant digits in plain (not exponent) notation.
pub fn sig(v: f64, n: usize) -> String {
    if !v.is_finite() {
        return "-".to_string();
    }
    if v == 0.0 {
        return format!("{:.*}", n.saturating_sub(1), 0.0);
    }
    let mag = v.abs().log10().floor() as i64;
    let decimals = (n as i64 - 1 - mag).max(0) as usize;
    format!("{v:.decimals$}")
}

/// A head converted between units as the user wrote it: rounded to 12 significant figures, so
/// 0.3 ft → m → ft prints 0.3, not 0.30000000000000004 (far below any survey's precision).
pub fn as_written(v: f64) -> f64 {
    if v == 0.0 || !v.is_finite() {
        return v + 0.0;
    }
    let scale = 10f64.powi(11 - v.abs().log10().floor() as i32);
    (v * scale).round() / scale + 0.0
}

/// `text` with every length in metres or millimetres ("0.06 m", "0.1 mm") followed by its value
/// in feet, for US-unit outputs of rules that the standards state in SI.
pub fn with_feet(text: &str) -> String {
    let mut out = String::with_capacity(text.len() + 32);
    let words: Vec<&str> = text.split(' ').collect();
    for (i, w) in words.iter().enumerate() {
        if i > 0 {
            out.push(' ');
        }
        out.push_str(w);
        let next = words.get(i + 1).copied().unwrap_or("");
        let unit = next.trim_end_matches([',', ';', ')', '.', ':']);
        let per_m = match unit {
            "m" => 1.0,
            "mm" => 0.001,
            _ => continue,
        };
        if let Ok(v) = w.trim_start_matches('(').parse::<f64>() {
            let ft = v * per_m / 0.3048;
            out.push(' ');
            out.push_str(next);
            out.push_str(&format!(" ({} ft)", sig(ft, 2)));
            // the unit word is written here already
            return with_feet_rest(out, &words[i + 2..]);
        }
    }
    out
}

fn with_feet_rest(mut out: String, rest: &[&str]) -> String {
    if !rest.is_empty() {
        out.push(' ');
        out.push_str(&with_feet(&rest.join(" ")));
    }
    out
}

/// Wraps `text` at `width` columns (on spaces).
pub fn wrap(text: &str, width: usize) -> String {
    let mut out = String::new();
    let mut line = 0;
    for word in text.split_whitespace() {
        if line > 0 && line + 1 + word.chars().count() > width {
            out.push('\n');
            line = 0;
        } else if line > 0 {
            out.push(' ');
            line += 1;
        }
        out.push_str(word);
        line += word.chars().count();
    }
    out
}

/// Text made safe inside HTML (the field sheet, the network overview).
pub fn html_escape(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn significant_digits() {
        assert_eq!(sig(0.0012345, 3), "0.00123");
        assert_eq!(sig(123.456, 4), "123.5");
        assert_eq!(sig(12345.6, 3), "12346");
    }
}
