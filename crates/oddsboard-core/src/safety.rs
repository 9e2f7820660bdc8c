//! The safety wording (SPEC §8), written once: the standing cautions every
//! screen, report and JSON document carries, and the contextual notes that
//! appear where they matter. The command line, the dashboard, the report and
//! the advice all build their notes here, so a note reads the same wherever
//! it shows.
//!
//! Functions return plain sentences; callers add their own markers (`! `,
//! `» advice`) and layout.

/// The standing cautions, in order. Every JSON document carries them as
/// `cautions`; text outputs print them joined ([`standing_caution`]).
pub const CAUTIONS: [&str; 4] = [
    "Decision support only. The odds are only as good as the ratings and needs they are computed from.",
    "The model assumes what it states: traits vary independently of each other, units of different types independently, and units of one type together only as rated.",
    "A plan never replaces the incident commander's judgement, the incident's command structure, local operating procedures, the applicable codes and standards, or personnel-accountability practice.",
    "Life safety first.",
];

/// The standing cautions condensed for a dashboard panel, which keeps a
/// few rows for them whatever its height.
pub const CAUTION_SCREEN: &str = "Decision support only. The odds are only as good as the ratings \
and assume the stated independence. The incident's command, local procedures, codes and standards \
and personnel accountability come first. Life safety first.";

/// The standing caution in the short form used where space is scarce (a
/// narrow dashboard); it keeps the first and the last caution's sense.
pub const CAUTION_SHORT: &str = "Decision support only: the odds are only as good as the \
ratings. Command, procedures and accountability first. Life safety first.";

/// The general form of each contextual note, for the end of a report.
pub const NOTE_RULES: [&str; 3] = [
    "A life-safety task in the gamble regime calls for more resources, not for relying on spread.",
    "Before withdrawing units from a task in progress, confirm disengagement and personnel accountability.",
    "A task below its minimum crew is counted as failing whatever its ratings.",
];

/// The standing cautions as one paragraph.
pub fn standing_caution() -> String {
    CAUTIONS.join(" ")
}

/// Whether a note speaks of the placement as it stands or of the best plan.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum When {
    /// The placement on the ground (or the one shown).
    Now,
    /// Even after the best plan the solver found.
    WithBestPlan,
}

impl When {
    fn words(self) -> &'static str {
        match self {
            When::Now => "",
            When::WithBestPlan => " even with the best plan",
        }
    }
}

/// A life-safety task in the gamble regime. `hint` (may be empty) names
/// what to request, e.g. ` (e.g. 2 × engine)`.
pub fn life_gamble(task: &str, when: When, hint: &str) -> String {
    format!(
        "{task} is a life-safety task in the gamble regime{}: short on average, only a lucky draw meets its need. Request more resources rather than rely on spread{hint}.",
        when.words()
    )
}

/// A life-safety task on the hedge side but below its secure level. The
/// odds come already written (see `odds::text`).
pub fn life_below_secure(task: &str, odds: &str, secure: &str, when: When, hint: &str) -> String {
    let verb = match when {
        When::Now => "is",
        When::WithBestPlan => "stays",
    };
    format!(
        "{task} (life safety) {verb} below its secure level ({odds} < {secure}){}: request more resources{hint}.",
        when.words()
    )
}

/// Units to be taken off a task in progress.
pub fn withdrawal(units: &[&str], task: &str) -> String {
    format!(
        "Withdrawing {} from {task} while it is in progress: confirm disengagement and personnel accountability before moving.",
        units.join(", ")
    )
}

/// A task below its minimum crew; `crew` is (units on it, minimum) when
/// known.
pub fn below_minimum(task: &str, crew: Option<(usize, u32)>) -> String {
    match crew {
        Some((have, min)) => format!(
            "{task} has {have} of its minimum {min} units: its odds count as 0 until it is crewed."
        ),
        None => {
            format!("{task} is below its minimum crew: its odds count as 0 until it is crewed.")
        }
    }
}

/// A task short of its secure level while idle reserve units could add to
/// its binding trait (an idle unit while a task it could lift stays short is
/// worth a look). `secure` comes already written (see `odds::text`).
pub fn reserve_could_help(task: &str, secure: &str, trait_id: &str, units: &[&str]) -> String {
    format!(
        "{task} is below its secure level ({secure}) and these reserve units could add to its {trait_id}: {} (see `oddsboard plan`).",
        units.join(", ")
    )
}

/// A task with needs and nobody on it.
pub fn no_units(task: &str) -> String {
    format!("{task} has needs and no units placed: its odds are 0.")
}

/// A unit lost from the incident (from its task, if it had one).
pub fn unit_lost(unit: &str, from: Option<&str>, reason: &str) -> String {
    let from = from.map(|t| format!(" from {t}")).unwrap_or_default();
    format!("{unit} lost{from} ({reason}): confirm its crew is accounted for.")
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_cautions_keep_what_spec_8_asks() {
        let all = standing_caution();
        for must in [
            "only as good as the ratings",
            "independent",
            "judgement",
            "command structure",
            "operating procedures",
            "codes and standards",
            "accountability",
            "Life safety first",
        ] {
            assert!(all.contains(must), "missing {must:?}");
        }
    }

    #[test]
    fn the_screen_forms_keep_the_essentials() {
        for text in [CAUTION_SCREEN, CAUTION_SHORT] {
            assert!(text.starts_with("Decision support only"));
            assert!(text.contains("accountability"));
            assert!(text.ends_with("Life safety first."));
        }
    }

    #[test]
    fn notes_name_their_task_and_what_to_do() {
        let g = life_gamble("T1", When::WithBestPlan, " (e.g. 1 × engine)");
        assert!(g.starts_with("T1 is a life-safety task in the gamble regime even with"));
        assert!(g.ends_with("spread (e.g. 1 × engine)."));
        assert!(withdrawal(&["E1", "E2"], "T3").contains("E1, E2 from T3"));
        assert!(below_minimum("T2", Some((1, 3))).contains("1 of its minimum 3"));
    }
}
