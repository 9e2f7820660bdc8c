//! Text from outside (incident files, log records, feeds) made safe to show
//! on a terminal, and the one check that an id is fit to be an id.
//!
//! A terminal obeys control characters: ESC starts a sequence that can set
//! the window title or clear the screen, C1 characters such as U+009B (CSI)
//! do the same on some terminals, and a bare CR or BS overwrites what was
//! printed. Every output point for people (the dashboard, `timeline`,
//! `report`, `odds`, `plan`, `sheet`, `record`'s echo, error messages that
//! quote input) passes such text through [`clean`], which writes each of
//! these characters as a visible Rust-style escape (`\u{1b}`). JSON output is
//! left to serde_json's standard escaping.

use std::borrow::Cow;

/// True for the characters a terminal may act on: C0 (U+0000–U+001F), DEL
/// (U+007F) and C1 (U+0080–U+009F, which holds the 8-bit escape
/// introducers CSI, OSC, DCS, APC, PM and SOS). This is exactly
/// `char::is_control` (Unicode general category Cc).
pub fn is_unsafe(c: char) -> bool {
    c.is_control()
}

/// `s` with every control character written as `\u{xx}`; borrowed (no
/// allocation) when there is none, which is nearly always.
pub fn clean(s: &str) -> Cow<'_, str> {
    if !s.chars().any(is_unsafe) {
        return Cow::Borrowed(s);
    }
    let mut out = String::with_capacity(s.len() + 8);
    for c in s.chars() {
        if is_unsafe(c) {
            out.push_str(&format!("\\u{{{:x}}}", c as u32));
        } else {
            out.push(c);
        }
    }
    Cow::Owned(out)
}

/// Like [`clean`] but keeps line feeds, for multi-line text we lay out
/// ourselves (a table, a report): each line is cleaned on its own.
pub fn clean_lines(s: &str) -> Cow<'_, str> {
    if !s.chars().any(|c| c != '\n' && is_unsafe(c)) {
        return Cow::Borrowed(s);
    }
    let parts: Vec<Cow<str>> = s.split('\n').map(clean).collect();
    Cow::Owned(parts.join("\n"))
}

/// Why `id` cannot be an id, if it cannot: empty (or only blanks), or
/// holding a control character. Ids are written to terminals, file names
/// of charts and the log, and are typed back by people; the loader and
/// `log::apply` both ask this one function.
pub fn id_problem(id: &str) -> Option<String> {
    if id.trim().is_empty() {
        return Some("must not be empty".into());
    }
    let bad: Vec<String> = id
        .chars()
        .filter(|c| is_unsafe(*c))
        .map(|c| format!("\\u{{{:x}}}", c as u32))
        .collect();
    if bad.is_empty() {
        None
    } else {
        Some(format!(
            "`{}` holds the control character{} {}; an id must be printable",
            clean(id),
            if bad.len() == 1 { "" } else { "s" },
            bad.join(" ")
        ))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn plain_text_is_borrowed() {
        assert!(matches!(clean("Search bins · 42.7 %"), Cow::Borrowed(_)));
        assert!(matches!(clean_lines("a\nb"), Cow::Borrowed(_)));
    }

    // The characters are those of Unicode general category Cc (the C0 and
    // C1 control sets of ISO/IEC 6429 and DEL), written from the standard.
    #[test]
    fn every_control_character_is_escaped() {
        assert_eq!(clean("a\u{1b}]0;x\u{7}b"), "a\\u{1b}]0;x\\u{7}b");
        assert_eq!(clean("\u{9b}2J"), "\\u{9b}2J");
        assert_eq!(
            clean("\u{7f}\u{0}\r\n\t"),
            "\\u{7f}\\u{0}\\u{d}\\u{a}\\u{9}"
        );
        assert_eq!(clean("ünïcødé ✓ \u{a0}"), "ünïcødé ✓ \u{a0}");
        for c in (0u32..0x20).chain(0x7f..0xa0).filter_map(char::from_u32) {
            assert!(!clean(&c.to_string()).chars().any(|x| x.is_control()));
        }
        assert_eq!(clean_lines("a\u{1b}\nb\r"), "a\\u{1b}\nb\\u{d}");
    }

    #[test]
    fn ids_are_refused_for_blanks_and_control_characters() {
        assert_eq!(id_problem("engine-1"), None);
        assert_eq!(id_problem("équipe 2"), None);
        assert!(id_problem("  ").is_some());
        let m = id_problem("e\u{1b}[2J").unwrap_or_default();
        assert!(m.contains("\\u{1b}") && !m.contains('\u{1b}'), "{m}");
        assert!(id_problem("a\u{85}").is_some());
    }
}
