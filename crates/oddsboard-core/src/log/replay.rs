//! Replay: the state after each record, by folding [`apply`] over the log.

use super::LogError;
use super::apply::apply;
use super::codec::Record;
use super::event::{Event, Move};
use super::snapshot;
use crate::model::Incident;

/// A recommendation not yet accepted or rejected.
#[derive(Debug, Clone, PartialEq)]
pub struct PendingPlan {
    pub seq: u64,
    pub moves: Vec<Move>,
}

/// The state of a replay: the incident after the last record stepped, and
/// what the incident state does not hold (notes, the pending proposal).
#[derive(Debug, Clone, PartialEq)]
pub struct Replay {
    pub state: Incident,
    /// Sequence number of the last record stepped.
    pub seq: u64,
    /// Notes so far, with the sequence number of their record.
    pub notes: Vec<(u64, String)>,
    /// The last `plan_proposed` until a plan is accepted or rejected.
    pub pending: Option<PendingPlan>,
}

impl Replay {
    /// Starts from the snapshot record.
    pub fn start(first: &Record) -> Result<Replay, LogError> {
        let Event::IncidentOpened { incident, .. } = &first.event else {
            return Err(LogError::Refused {
                seq: first.seq,
                message: format!(
                    "the first record must be the incident snapshot, not `{}`",
                    first.event.kind()
                ),
            });
        };
        let state = snapshot::from_file(incident, "incident snapshot").map_err(|message| {
            LogError::Refused {
                seq: first.seq,
                message: format!("the incident snapshot is not valid: {message}"),
            }
        })?;
        Ok(Replay {
            state,
            seq: first.seq,
            notes: Vec::new(),
            pending: None,
        })
    }

    /// Applies the next record; on error nothing changes.
    pub fn step(&mut self, record: &Record) -> Result<(), LogError> {
        apply(&mut self.state, &record.event).map_err(|e| LogError::Refused {
            seq: record.seq,
            message: format!("`{}` does not apply: {e}", record.event.kind()),
        })?;
        self.seq = record.seq;
        match &record.event {
            Event::Note { text } => self.notes.push((record.seq, text.clone())),
            Event::PlanProposed { moves } => {
                self.pending = Some(PendingPlan {
                    seq: record.seq,
                    moves: moves.clone(),
                })
            }
            Event::PlanAccepted { .. } | Event::PlanRejected {} => self.pending = None,
            _ => {}
        }
        Ok(())
    }
}

/// The state after the last record. Use [`Replay`] to see the state after
/// each record as it goes.
pub fn fold(records: &[Record]) -> Result<Incident, LogError> {
    let Some((first, rest)) = records.split_first() else {
        return Err(LogError::Refused {
            seq: 0,
            message: "no records: the incident snapshot is missing".into(),
        });
    };
    let mut replay = Replay::start(first)?;
    for r in rest {
        replay.step(r)?;
    }
    Ok(replay.state)
}
