//! The incident log (SPEC §4): append-only, one JSON record per line, the
//! first record the whole incident, so a log alone replays.
//!
//! Main types:
//! * [`Event`]: what happened (the fixed shapes of SPEC §4, tag `kind`), plus
//!   [`Event::IncidentOpened`], the snapshot that opens every log.
//! * [`Record`]: `seq`, `at`, `by`, `event`, and on the wire a CRC-32.
//! * [`apply`]: one fold step; refuses what does not apply and then leaves
//!   the state unchanged. [`fold`] and [`Replay`] replay a log.
//! * [`read_log`] / [`read_from`]: reading, with a torn tail reported and left
//!   out and damage before it refused with its line.
//! * [`LogWriter`]: appends under an advisory lock, checks the event against
//!   the state at the end of the log, syncs before returning.
//!
//! Invariant: no terminal I/O; a refused event never changes the file.

pub mod apply;
pub mod codec;
pub mod event;
pub mod generate;
pub mod inverse;
pub mod read;
pub mod replay;
pub mod snapshot;
pub mod write;

pub use apply::{ApplyError, apply};
pub use codec::{Record, decode_line, encode_line};
pub use event::{Event, FORMAT_VERSION, Move, OutcomeValue, StatusValue, describe_moves};
pub use inverse::{InverseError, inverse, inverse_all};
pub use read::{LogContents, TornTail, parse_log, read_from, read_log};
pub use replay::{PendingPlan, Replay, fold};
pub use write::LogWriter;

use crate::model::Incident;
use std::path::Path;

/// Why a log could not be read, replayed or appended to.
#[derive(Debug, thiserror::Error)]
pub enum LogError {
    #[error("{file}: {source}")]
    Io {
        file: String,
        #[source]
        source: std::io::Error,
    },
    #[error("{file}: already exists; a log is never overwritten")]
    Exists { file: String },
    /// A record that cannot be read, or a broken sequence; `line` 0 when
    /// only a byte offset is known (the message says it).
    #[error("{file}{}: {message}", if *.line > 0 { format!(":{}", .line) } else { String::new() })]
    Damaged {
        file: String,
        line: usize,
        message: String,
    },
    #[error(
        "{file}: written by a newer program (log format {found}; this one reads format {}); upgrade oddsboard to read it",
        FORMAT_VERSION
    )]
    FutureFormat { file: String, found: u64 },
    /// A record of the log that does not apply to the state before it
    /// (records are one per line, so its line is its sequence number).
    #[error("record {seq} (line {seq}): {message}")]
    Refused { seq: u64, message: String },
    /// A time given for a new record that is earlier than the last record's.
    #[error(
        "{file}: the time given ({at}) is earlier than record {seq} ({last}); a log's times never go backwards"
    )]
    TimeBackwards {
        file: String,
        at: String,
        seq: u64,
        last: String,
    },
    /// An event offered for appending that does not apply.
    #[error("{file}: `{kind}` refused: {reason}")]
    EventRefused {
        file: String,
        kind: &'static str,
        reason: ApplyError,
    },
}

impl LogError {
    /// Names the file in an error that was raised without it.
    pub fn in_file(self, file: &str) -> LogError {
        match self {
            LogError::Refused { seq, message } => LogError::Damaged {
                file: file.into(),
                line: seq as usize,
                message,
            },
            other => other,
        }
    }
}

/// A log's state at its end, with its torn tail if any.
pub fn load_log(path: &Path) -> Result<(Incident, LogContents), LogError> {
    let contents = read_log(path)?;
    let state = fold(&contents.records).map_err(|e| e.in_file(&path.display().to_string()))?;
    Ok((state, contents))
}

/// True when the bytes look like a log rather than an incident file: the
/// first non-blank byte opens a JSON object and the first line has `"seq"`.
pub fn looks_like_log_bytes(head: &[u8]) -> bool {
    let start = head.iter().position(|b| !b.is_ascii_whitespace());
    let Some(start) = start else { return false };
    if head[start] != b'{' {
        return false;
    }
    let line_end = head[start..]
        .iter()
        .position(|&b| b == b'\n')
        .map_or(head.len(), |p| start + p);
    head[start..line_end].windows(5).any(|w| w == b"\"seq\"")
}
