//! Text shared by messages and summaries: lists, numbers, sizes and durations.

/// Lists up to eight items and how many more there are.
pub fn list_some(items: &[String]) -> String {
    let shown: Vec<&str> = items.iter().take(8).map(String::as_str).collect();
    let mut s = shown.join("; ");
    if items.len() > 8 {
        s.push_str(&format!("; and {} more", items.len() - 8));
    }
    s
}

/// `text` cut to at most `max` characters, with `...` where it was cut (echoed values
/// and library messages stay readable).
pub fn cut(text: &str, max: usize) -> String {
    if text.chars().count() <= max {
        return text.to_string();
    }
    let kept: String = text.chars().take(max.saturating_sub(3)).collect();
    format!("{kept}...")
}

/// A number with at most `decimals` decimals and no trailing zeros: `2670`, `2300.5`,
/// `494324.08`.
pub fn trimmed(value: f64, decimals: usize) -> String {
    let s = format!("{value:.decimals$}");
    if !s.contains('.') {
        return s;
    }
    let s = s.trim_end_matches('0').trim_end_matches('.');
    if s == "-0" {
        "0".to_string()
    } else {
        s.to_string()
    }
}

/// A density or other setting for text and column names: `2670`, `2300.5`.
pub fn number(value: f64) -> String {
    trimmed(value, 3)
}

/// A coverage for a message: four decimals, or six when it is just short of 1 (which
/// would otherwise print as 1.0000).
pub fn coverage_text(c: f64) -> String {
    if c < 1.0 && c > 0.99995 {
        format!("{c:.6}")
    } else {
        format!("{c:.4}")
    }
}

/// A memory size in words: `12 kB`, `3.4 MB`, `1.6 GB`.
pub fn bytes_text(bytes: f64) -> String {
    if bytes < 1e6 {
        format!("{:.0} kB", (bytes / 1e3).max(1.0))
    } else if bytes < 1e9 {
        format!("{:.1} MB", bytes / 1e6)
    } else if bytes < 1e12 {
        format!("{:.1} GB", bytes / 1e9)
    } else if bytes < 1e15 {
        format!("{:.1} TB", bytes / 1e12)
    } else {
        format!("{bytes:.1e} bytes")
    }
}

/// A duration in words: `40 s`, `3.5 min`, `2.1 h`.
pub fn duration_text(seconds: f64) -> String {
    if seconds < 90.0 {
        format!("{seconds:.0} s")
    } else if seconds < 5400.0 {
        format!("{:.1} min", seconds / 60.0)
    } else {
        format!("{:.1} h", seconds / 3600.0)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn numbers_are_trimmed() {
        assert_eq!(trimmed(494324.08, 8), "494324.08");
        assert_eq!(trimmed(2670.0, 3), "2670");
        assert_eq!(trimmed(-0.0000001, 3), "0");
        assert_eq!(number(2300.5), "2300.5");
        assert_eq!(cut("abcdef", 5), "ab...");
        assert_eq!(cut("abc", 5), "abc");
        assert_eq!(coverage_text(0.999999), "0.999999");
        assert_eq!(coverage_text(0.65), "0.6500");
        assert_eq!(
            list_some(&(0..10).map(|i| i.to_string()).collect::<Vec<_>>()),
            "0; 1; 2; 3; 4; 5; 6; 7; and 2 more"
        );
    }
}
