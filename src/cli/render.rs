//! Plain-text tables shared by the commands that print task odds (`odds`,
//! `plan`, `simulate`): amounts and margins, the task table grouped by tier,
//! contextual safety notes and the standing caution. Odds are written by
//! [`crate::odds::text`], the one formatter of every text output.
//!
//! Everything here takes the serializable views of [`crate::odds::view`], so
//! the text and the JSON of a command always show the same numbers.

use crate::model::Tier;
use crate::odds::text::{pct, pct_detail};
use crate::odds::view::{TaskView, TierWorst};
use crate::safety;
use std::fmt::Write as _;

/// What the task table shows.
#[derive(Debug, Clone, Copy, Default)]
pub struct TableOptions {
    /// Add one line per counting trait under each task (default off).
    pub traits: bool,
}

/// The tier's name as the trade says it.
pub fn tier_title(tier: Tier) -> &'static str {
    match tier {
        Tier::Life => "Life safety",
        Tier::Stabilization => "Incident stabilization",
        Tier::Property => "Property conservation",
    }
}

/// Minus sign for display (U+2212 reads better than a hyphen in tables).
const MINUS: char = '\u{2212}';

fn signed(text: String) -> String {
    match text.strip_prefix('-') {
        Some(rest) => format!("{MINUS}{rest}"),
        None => text,
    }
}

/// An amount in a trait's unit with a sensible number of decimals.
pub fn format_amount(x: f64) -> String {
    // Adding 0.0 turns −0 into +0, which must not print as "−0".
    let x = x + 0.0;
    let a = x.abs();
    let text = if a >= 100.0 || a == 0.0 {
        format!("{x:.0}")
    } else if a >= 10.0 {
        format!("{x:.1}")
    } else {
        format!("{x:.2}")
    };
    signed(text)
}

/// Surplus or shortfall in the trait's own unit, e.g. `−450 L/min short`.
pub fn format_margin(margin: f64, unit: &str) -> String {
    let amount = format_amount(margin.abs());
    if margin < 0.0 {
        format!("{MINUS}{amount} {unit} short")
    } else {
        format!("+{amount} {unit} spare")
    }
}

/// z with its sign, or `∞` for a certain trait.
pub fn format_z(z: Option<f64>, margin: f64) -> String {
    match z {
        Some(z) => signed(format!("{z:+.2}")),
        None if margin >= 0.0 => "+∞".to_string(),
        None => format!("{MINUS}∞"),
    }
}

/// Regime in words (never colour alone: SPEC §7).
pub fn regime_words(regime: Option<&str>) -> &'static str {
    match regime {
        Some("hedge") => "hedge",
        Some("gamble") => "GAMBLE",
        _ => "-",
    }
}

/// Rows of cells laid out in aligned columns (right-aligned where asked).
pub struct Columns {
    rows: Vec<Vec<String>>,
    right: Vec<bool>,
}

impl Columns {
    pub fn new(header: &[&str], right: &[bool]) -> Self {
        Columns {
            rows: vec![header.iter().map(|s| s.to_string()).collect()],
            right: right.to_vec(),
        }
    }
    pub fn push(&mut self, row: Vec<String>) {
        self.rows.push(row);
    }
    /// The table, each line indented by `indent` spaces.
    pub fn render(&self, indent: usize) -> String {
        let n = self.rows.iter().map(Vec::len).max().unwrap_or(0);
        let mut widths = vec![0; n];
        for row in &self.rows {
            for (i, cell) in row.iter().enumerate() {
                widths[i] = widths[i].max(cell.chars().count());
            }
        }
        let mut out = String::new();
        for row in &self.rows {
            let mut line = " ".repeat(indent);
            for (i, cell) in row.iter().enumerate() {
                let pad = widths[i] - cell.chars().count();
                let last = i + 1 == row.len();
                if self.right.get(i).copied().unwrap_or(false) {
                    line.push_str(&" ".repeat(pad));
                    line.push_str(cell);
                } else {
                    line.push_str(cell);
                    if !last {
                        line.push_str(&" ".repeat(pad));
                    }
                }
                if !last {
                    line.push_str("  ");
                }
            }
            out.push_str(line.trim_end());
            out.push('\n');
        }
        out
    }
}

fn binding_cells(t: &TaskView) -> (String, String, String) {
    let Some(b) = t.binding() else {
        return ("-".into(), "-".into(), "no needs".into());
    };
    let margin = match t.forced_zero {
        Some("no_units") => "no units placed".to_string(),
        Some("below_minimum") => "below minimum units".to_string(),
        _ => format_margin(b.margin, &b.unit),
    };
    // A task forced to 0 shows the task's z (−∞), not the trait's.
    let z = if t.forced_zero.is_some() {
        format!("{MINUS}∞")
    } else {
        format_z(b.z, b.margin)
    };
    (b.trait_id.clone(), z, margin)
}

/// Unit ids, the first few only when many (the JSON carries them all).
pub fn unit_list(units: &[String]) -> String {
    const SHOWN: usize = 6;
    if units.is_empty() {
        "-".to_string()
    } else if units.len() <= SHOWN + 1 {
        units.join(" ")
    } else {
        format!("{} +{} more", units[..SHOWN].join(" "), units.len() - SHOWN)
    }
}

fn shorten(s: &str, max: usize) -> String {
    if s.chars().count() <= max {
        s.to_string()
    } else {
        let mut out: String = s.chars().take(max - 1).collect();
        out.push('…');
        out
    }
}

/// The task table grouped by tier (highest first), with a worst-odds line per
/// tier. `worst` comes from [`crate::odds::view::worst_by_tier`].
pub fn task_table(tasks: &[TaskView], worst: &[TierWorst], opts: TableOptions) -> String {
    let mut out = String::new();
    for tier in Tier::ALL {
        let in_tier: Vec<&TaskView> = tasks.iter().filter(|t| t.tier() == tier).collect();
        if in_tier.is_empty() {
            continue;
        }
        let secure = worst.iter().find(|w| w.tier == tier.as_str());
        let _ = write!(out, "{}", tier_title(tier));
        if let Some(w) = secure {
            let _ = write!(out, " (secure at {})", pct(w.secure));
        }
        out.push('\n');
        let mut cols = Columns::new(
            &[
                "Task", "Label", "Odds", "Regime", "Binding", "z", "Margin", "Units",
            ],
            &[false, false, true, false, false, true, false, false],
        );
        for t in &in_tier {
            let (binding, z, margin) = binding_cells(t);
            let units = unit_list(&t.units);
            cols.push(vec![
                t.id.clone(),
                shorten(&crate::clean::clean(&t.label), 28),
                pct_detail(t.ln_odds, t.ln_fail),
                regime_words(t.regime).to_string(),
                binding,
                z,
                margin,
                units,
            ]);
            if opts.traits {
                for tr in &t.traits {
                    let need = if tr.need_sd > 0.0 {
                        format!(
                            "need {} ± {} {}",
                            format_amount(tr.need),
                            format_amount(tr.need_sd),
                            tr.unit
                        )
                    } else {
                        format!("need {} {}", format_amount(tr.need), tr.unit)
                    };
                    cols.push(vec![
                        String::new(),
                        format!(
                            "· {}: {} ± {}",
                            tr.trait_id,
                            format_amount(tr.mean),
                            format_amount(tr.sd)
                        ),
                        pct_detail(tr.ln_odds, tr.ln_fail),
                        String::new(),
                        need,
                        format_z(tr.z, tr.margin),
                        format_margin(tr.margin, &tr.unit),
                        String::new(),
                    ]);
                }
            }
        }
        out.push_str(&cols.render(2));
        if let Some(w) = secure {
            let _ = writeln!(
                out,
                "  worst in {}: {} at {}",
                tier.as_str(),
                w.task,
                pct_detail(w.ln_odds, tasks_ln_fail(tasks, &w.task))
            );
        }
        out.push('\n');
    }
    out
}

fn tasks_ln_fail(tasks: &[TaskView], id: &str) -> Option<f64> {
    tasks.iter().find(|t| t.id == id).and_then(|t| t.ln_fail)
}

/// What hedge and gamble mean, for the foot of a table.
pub const REGIME_LEGEND: &str = "\
hedge: expected capability meets the need; spread only lowers the odds, so steady units protect the task.
GAMBLE: expected capability falls short; only a lucky draw meets the need. Request more resources.";

/// Contextual safety notes (SPEC §8) for the tasks shown.
pub fn safety_notes(tasks: &[TaskView]) -> Vec<String> {
    let mut notes = Vec::new();
    for t in tasks {
        if t.tier() == Tier::Life && t.regime == Some("gamble") {
            notes.push(safety::life_gamble(&t.id, safety::When::Now, ""));
        }
        match t.forced_zero {
            Some("no_units") => notes.push(safety::no_units(&t.id)),
            Some("below_minimum") => notes.push(safety::below_minimum(&t.id, None)),
            _ => {}
        }
    }
    notes
}

/// Wraps `text` at `width` columns, each line prefixed by `indent`.
pub fn wrap(text: &str, width: usize, indent: &str) -> String {
    let mut out = String::new();
    let mut line = String::new();
    for word in text.split_whitespace() {
        if !line.is_empty() && line.chars().count() + 1 + word.chars().count() > width {
            out.push_str(indent);
            out.push_str(&line);
            out.push('\n');
            line.clear();
        }
        if !line.is_empty() {
            line.push(' ');
        }
        line.push_str(word);
    }
    if !line.is_empty() {
        out.push_str(indent);
        out.push_str(&line);
        out.push('\n');
    }
    out
}

/// The standing caution, wrapped for the foot of a text output.
pub fn caution_text() -> String {
    wrap(&format!("Caution: {}", safety::standing_caution()), 78, "")
}

/// The foot of every text report: notes, the regime legend and the caution.
pub fn footer(tasks: &[TaskView]) -> String {
    let mut out = String::new();
    let notes = safety_notes(tasks);
    if !notes.is_empty() {
        out.push_str("Notes:\n");
        for n in notes {
            out.push_str(&wrap(&n, 76, "  ! "));
        }
        out.push('\n');
    }
    for line in REGIME_LEGEND.lines() {
        out.push_str(&wrap(line, 78, ""));
    }
    out.push('\n');
    out.push_str(&caution_text());
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn margins_in_the_traits_unit() {
        assert_eq!(format_margin(-450.0, "L/min"), "\u{2212}450 L/min short");
        assert_eq!(format_margin(2.5, "t"), "+2.50 t spare");
        assert_eq!(format_z(None, 1.0), "+∞");
        assert_eq!(format_z(Some(-1.234), 1.0), "\u{2212}1.23");
    }

    #[test]
    fn columns_align() {
        let mut c = Columns::new(&["a", "n"], &[false, true]);
        c.push(vec!["long".into(), "1".into()]);
        assert_eq!(c.render(0), "a     n\nlong  1\n");
    }
}
