//! Number formatting shared by the panels: amounts in their trait's own
//! unit, bars of eighths. Odds are written by `odds::text`, as everywhere.

use ratatui::text::Line;

/// An amount with a sensible number of digits.
pub fn amount(x: f64) -> String {
    if !x.is_finite() {
        return if x > 0.0 { "∞".into() } else { "-∞".into() };
    }
    let a = x.abs();
    let s = if a >= 100.0 || a == 0.0 {
        format!("{x:.0}")
    } else if a >= 10.0 {
        format!("{x:.1}")
    } else {
        format!("{x:.2}")
    };
    // -0.0, or a tiny negative rounded to zero, is written without a sign.
    match s.strip_prefix('-') {
        Some(rest) if rest.chars().all(|c| c == '0' || c == '.') => rest.to_string(),
        _ => s,
    }
}

/// A surplus (`+`) or shortfall (`-`) with its sign always shown.
pub fn signed_amount(x: f64) -> String {
    let s = amount(x);
    if x >= 0.0 && !s.starts_with('+') {
        format!("+{s}")
    } else {
        s
    }
}

/// z as shown beside a task (`z +1.9`, `z -0.4`, `z -∞`).
pub fn z_value(z: f64) -> String {
    if z == f64::INFINITY {
        "z +∞".into()
    } else if z == f64::NEG_INFINITY {
        "z -∞".into()
    } else {
        format!("z {z:+.1}")
    }
}

/// Joins a percentage to its number with a no-break space, so that a
/// wrapped line never leaves `%` alone at the start of the next row.
pub fn keep_percent(s: &str) -> String {
    s.replace(" %", "\u{a0}%")
}

/// A horizontal bar `width` cells wide filled to `fraction` in eighths; the
/// unfilled part is a dotted track so an empty bar is still visible without
/// colour.
pub fn bar(fraction: f64, width: usize) -> String {
    const PARTIAL: [&str; 8] = ["", "▏", "▎", "▍", "▌", "▋", "▊", "▉"];
    let f = if fraction.is_finite() {
        fraction.clamp(0.0, 1.0)
    } else {
        0.0
    };
    let eighths = (f * (width * 8) as f64).round() as usize;
    let full = eighths / 8;
    let part = eighths % 8;
    let mut s = "█".repeat(full);
    let mut used = full;
    if part > 0 && used < width {
        s.push_str(PARTIAL[part]);
        used += 1;
    }
    s.push_str(&"·".repeat(width.saturating_sub(used)));
    s
}

/// Cuts `s` to at most `width` characters, marking the cut with `…`.
pub fn fit(s: &str, width: usize) -> String {
    let n = s.chars().count();
    if n <= width {
        s.to_string()
    } else if width == 0 {
        String::new()
    } else {
        let mut out: String = s.chars().take(width - 1).collect();
        out.push('…');
        out
    }
}

/// Pads or cuts `s` to exactly `width` characters.
pub fn pad(s: &str, width: usize) -> String {
    let cut = fit(s, width);
    let n = cut.chars().count();
    format!("{cut}{}", " ".repeat(width - n))
}

/// Text from outside (a label, a note, a reason, an actor) as the screen
/// may show it: control characters escaped (`\u{1b}`), see `clean`.
pub fn shown(s: &str) -> std::borrow::Cow<'_, str> {
    crate::clean::clean(s)
}

/// Every span of `lines` with its control characters escaped: each panel
/// passes what it draws through here, so nothing from a file or a feed
/// reaches the terminal raw. Spans without one are kept as they are.
pub fn clean_lines<'a>(lines: Vec<Line<'a>>) -> Vec<Line<'a>> {
    lines.into_iter().map(clean_line).collect()
}

/// One line's spans with their control characters escaped.
pub fn clean_line(mut line: Line<'_>) -> Line<'_> {
    for span in &mut line.spans {
        if let std::borrow::Cow::Owned(s) = crate::clean::clean(&span.content) {
            span.content = s.into();
        }
    }
    line
}

/// "1 move", "3 moves": a count with its noun in the right number.
pub fn count(n: usize, singular: &str, plural: &str) -> String {
    if n == 1 {
        format!("{n} {singular}")
    } else {
        format!("{n} {plural}")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn bars_fill_in_eighths() {
        assert_eq!(bar(0.0, 4), "····");
        assert_eq!(bar(1.0, 4), "████");
        assert_eq!(bar(0.5, 4), "██··");
        assert_eq!(bar(0.5 + 1.0 / 32.0, 4), "██▏·");
        assert_eq!(bar(f64::NAN, 3), "···");
    }

    #[test]
    fn amounts_carry_their_sign() {
        assert_eq!(signed_amount(800.0), "+800");
        assert_eq!(signed_amount(-1200.4), "-1200");
        assert_eq!(signed_amount(0.25), "+0.25");
        assert_eq!(amount(-0.0), "0");
        assert_eq!(amount(-0.001), "0.00");
        assert_eq!(signed_amount(-0.0), "+0");
        assert_eq!(pad("abcdef", 4), "abc…");
        assert_eq!(pad("ab", 4), "ab  ");
        assert_eq!(keep_percent("98.1 % < 99.0 %"), "98.1\u{a0}% < 99.0\u{a0}%");
    }
}
