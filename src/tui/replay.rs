//! The trainer's replay: the cursor in a saved log, seeking (forward by
//! applying records, backward from the nearest checkpoint), play at a pace,
//! and finding a record by number or time.

use std::time::Duration;

use super::app::{AppState, Mode};
use super::theme::Theme;
use super::update::on_record;
use crate::log::Record;

/// Position and pace of a replay.
#[derive(Debug, Clone)]
pub struct ReplayCursor {
    pub records: std::sync::Arc<Vec<Record>>,
    /// Index in `records` of the last record applied.
    pub at: usize,
    pub playing: bool,
    /// Records per second while playing.
    pub speed: f64,
    /// Seconds of play not yet turned into steps.
    pub owed: f64,
    /// The state after every [`CHECKPOINT_EVERY`]-th record, kept as the
    /// replay first passes it, so a step back or a jump folds at most that
    /// many records instead of the whole log.
    checkpoints: std::sync::Arc<Vec<(usize, AppState)>>,
}

/// Records between two replay checkpoints.
pub const CHECKPOINT_EVERY: usize = 64;

/// Play speeds offered by `+`/`-`, records per second.
pub const REPLAY_SPEEDS: [f64; 6] = [0.5, 1.0, 2.0, 5.0, 10.0, 50.0];

/// The state of a replay at the start of its log: the snapshot only.
pub fn replay_state(records: Vec<Record>, theme: Theme) -> Result<AppState, crate::log::LogError> {
    let first = crate::log::fold(&records[..1.min(records.len())])?;
    let mut state = AppState::new(Mode::Replay, first, theme);
    let records = std::sync::Arc::new(records);
    if let Some(r) = records.first() {
        on_record(&mut state, r.clone());
    }
    state.replay = Some(ReplayCursor {
        records,
        at: 0,
        playing: false,
        speed: 2.0,
        owed: 0.0,
        checkpoints: Default::default(),
    });
    Ok(state)
}

/// Moves the replay to record index `target`. Forward, the records in
/// between are applied to the state shown; backward, the state restarts from
/// the last checkpoint at or before `target` (or the snapshot) and folds
/// forward from there: the log stays the only source of truth (no reverse
/// steps), and no step re-folds the whole log.
pub fn replay_seek(state: &mut AppState, target: usize) {
    let Some(mut cursor) = state.replay.take() else {
        return;
    };
    let target = target.min(cursor.records.len().saturating_sub(1));
    // `applied`: index of the last record already in `state`, if any.
    let applied = if target >= cursor.at {
        Some(cursor.at)
    } else {
        let base = cursor
            .checkpoints
            .iter()
            .rev()
            .find(|(i, _)| *i <= target)
            .map(|(i, s)| (*i, s.clone()));
        let (applied, mut fresh) = match base {
            Some((i, s)) => (Some(i), s),
            None => {
                let Ok(first) = crate::log::fold(&cursor.records[..1]) else {
                    state.replay = Some(cursor);
                    return;
                };
                (None, AppState::new(Mode::Replay, first, state.theme))
            }
        };
        fresh.selected = state.selected;
        fresh.theme = state.theme;
        *state = fresh;
        applied
    };
    let from = applied.map_or(0, |i| i + 1);
    for i in from..=target {
        on_record(state, cursor.records[i].clone());
        let known = cursor.checkpoints.last().map_or(0, |(k, _)| *k);
        if i > 0 && i % CHECKPOINT_EVERY == 0 && i > known {
            std::sync::Arc::make_mut(&mut cursor.checkpoints).push((i, state.clone()));
        }
    }
    state.selected = state
        .selected
        .min(state.task_order().len().saturating_sub(1));
    cursor.at = target;
    state.replay = Some(cursor);
}

pub(super) fn replay_tick(state: &mut AppState, dt: Duration) {
    let Some(c) = state.replay.as_mut() else {
        return;
    };
    if !c.playing {
        return;
    }
    c.owed += dt.as_secs_f64() * c.speed;
    let steps = c.owed.floor() as usize;
    if steps == 0 {
        return;
    }
    c.owed -= steps as f64;
    let last = c.records.len().saturating_sub(1);
    let target = (c.at + steps).min(last);
    if target == last {
        c.playing = false;
    }
    replay_seek(state, target);
}

/// Finds a record by sequence number, `HH:MM[:SS]` (UTC) or RFC 3339 time:
/// the last record at or before that time.
pub fn replay_target(state: &AppState, text: &str) -> Result<usize, String> {
    let Some(c) = &state.replay else {
        return Err("not replaying".into());
    };
    let text = text.trim();
    if let Ok(seq) = text.parse::<u64>() {
        return c
            .records
            .iter()
            .position(|r| r.seq == seq)
            .ok_or_else(|| format!("no record #{seq} (the log has #1 to #{})", c.records.len()));
    }
    let at_or_before =
        |pred: &dyn Fn(&Record) -> bool| c.records.iter().rposition(pred).unwrap_or(0);
    if let Ok(t) = chrono::DateTime::parse_from_rfc3339(text) {
        let t = t.with_timezone(&chrono::Utc);
        return Ok(at_or_before(&|r: &Record| r.at <= t));
    }
    for fmt in ["%H:%M:%S", "%H:%M"] {
        if let Ok(t) = chrono::NaiveTime::parse_from_str(text, fmt) {
            return Ok(at_or_before(&|r: &Record| r.at.time() <= t));
        }
    }
    Err(format!(
        "{text:?} is neither a sequence number, HH:MM[:SS] nor an RFC 3339 time"
    ))
}
