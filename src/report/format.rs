//! Number and span formatting shared by every renderer, so that the text report, the exhibit
//! and the exports print a figure the same way.

/// Formats a number with at most `digits` decimals, trailing zeros trimmed: `1.50` → `1.5`,
/// `2.0` → `2`.
pub fn trim_number(value: f64, digits: usize) -> String {
    let text = format!("{value:.digits$}");
    if text.contains('.') {
        text.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        text
    }
}

/// `bar 9` or `bars 9–16` (an en dash, as the exhibit prints spans).
pub fn bars_text(first: &str, last: &str) -> String {
    bar_span(first, last, '–')
}

/// `bar 9` or `bars 9<dash>16`.
pub fn bar_span(first: &str, last: &str, dash: char) -> String {
    if first == last {
        format!("bar {first}")
    } else {
        format!("bars {first}{dash}{last}")
    }
}

/// An E-value in a short form for tables: `3e-29`, `0.004`, `1.2`.
pub fn format_e_value(e: f64) -> String {
    if e >= 0.01 {
        format!("{e:.2}")
    } else {
        format!("{e:.0e}")
    }
}

/// An empirical p-value from `draws` random draws, `(1 + exceeding) / (1 + draws)` (North,
/// Curtis & Sham 2002, "A note on the calculation of empirical P values from Monte Carlo
/// procedures"): at its floor, when no draw reached the observed value, the true p
/// can be anything below it, so it prints as `≤ 0.01`; otherwise `0.03`.
pub fn format_empirical_p(p: f64, draws: usize) -> String {
    let floor = 1.0 / (draws as f64 + 1.0);
    if p <= floor * (1.0 + 1e-9) {
        format!("≤ {}", trim_number(floor, 3))
    } else {
        trim_number(p, 3)
    }
}

/// Small values in plain scientific notation for prose: `0.0021`, `3.1×10^-7`.
pub fn sci(x: f64) -> String {
    if x == 0.0 {
        "0".into()
    } else if x.abs() >= 0.001 && x.abs() < 10_000.0 {
        trim_number(x, 4)
    } else {
        let e = x.abs().log10().floor() as i32;
        let m = x / 10f64.powi(e);
        format!("{}×10^{e}", trim_number(m, 2))
    }
}

/// A share in [0, 1] as a whole percentage: `0.935` → `94%`.
pub fn percent(x: f64) -> String {
    format!("{:.0}%", 100.0 * x)
}

/// A file size in words: `812 bytes`, `51.7 KB (51690 bytes)`, `12.3 MB (12345678 bytes)`.
pub fn size_text(bytes: u64) -> String {
    if bytes < 10_000 {
        format!("{bytes} bytes")
    } else if bytes < 10_000_000 {
        format!(
            "{} KB ({bytes} bytes)",
            trim_number(bytes as f64 / 1000.0, 1)
        )
    } else {
        format!("{} MB ({bytes} bytes)", trim_number(bytes as f64 / 1e6, 1))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn numbers() {
        assert_eq!(trim_number(1.50, 2), "1.5");
        assert_eq!(trim_number(2.0, 2), "2");
        assert_eq!(sci(0.00021), "2.1×10^-4");
        assert_eq!(sci(0.5), "0.5");
        assert_eq!(format_e_value(0.003), "3e-3");
        assert_eq!(bars_text("9", "16"), "bars 9–16");
        assert_eq!(bar_span("9", "9", '-'), "bar 9");
        // 99 shuffles, none as strong: p = 1/100 at its floor.
        assert_eq!(format_empirical_p(0.01, 99), "≤ 0.01");
        assert_eq!(format_empirical_p(0.03, 99), "0.03");
    }
}

/// Text from a file or the command line made safe to print: control characters (terminal
/// escape sequences, carriage returns, backspaces) and the bidirectional overrides that reorder
/// what a reader sees are shown as `\u{…}` escapes; other characters are kept.
pub fn printable(text: &str) -> String {
    escape(text, |_| false)
}

/// A report of several lines made safe to print: as [`printable`], line breaks and tabs kept.
pub fn printable_text(text: &str) -> String {
    escape(text, |c| c == '\n' || c == '\t')
}

fn escape(text: &str, keep: impl Fn(char) -> bool) -> String {
    let hidden = |c: char| {
        !keep(c)
            && (c.is_control() || matches!(c, '\u{202a}'..='\u{202e}' | '\u{2066}'..='\u{2069}'))
    };
    if !text.chars().any(hidden) {
        return text.to_string();
    }
    text.chars()
        .map(|c| {
            if hidden(c) {
                format!("\\u{{{:x}}}", u32::from(c))
            } else {
                c.to_string()
            }
        })
        .collect()
}

#[cfg(test)]
mod printable_tests {
    use super::{printable, printable_text};

    #[test]
    fn escapes_are_shown_not_obeyed() {
        assert_eq!(printable("Fl\u{fb}te"), "Fl\u{fb}te");
        assert_eq!(printable("a\u{1b}[2Jb\r\n"), "a\\u{1b}[2Jb\\u{d}\\u{a}");
        assert_eq!(printable("x\u{202e}y"), "x\\u{202e}y");
        assert_eq!(printable_text("a\tb\n\u{1b}[31m"), "a\tb\n\\u{1b}[31m");
    }
}
