//! Reading a log: complete lines are decoded and checked; a torn tail is
//! reported and left out; damage before the tail stops the load.

use super::LogError;
use super::codec::{DecodeError, Record, decode_line, peek_format};
use super::event::{Event, FORMAT_VERSION};
use std::io::{Read, Seek, SeekFrom};
use std::path::Path;

/// The last line of a log, left out because a crash tore it: it has no
/// newline, or its checksum is wrong.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct TornTail {
    /// 1-based line number of the torn line.
    pub line: usize,
    /// Byte offset where it starts (= where the complete records end).
    pub offset: u64,
    /// Its length in bytes.
    pub bytes: u64,
    pub reason: String,
}

impl std::fmt::Display for TornTail {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(
            f,
            "torn last record (line {}) left out: {} bytes at offset {}: {}",
            self.line, self.bytes, self.offset, self.reason
        )
    }
}

/// Everything a log holds.
#[derive(Debug, Clone, PartialEq)]
pub struct LogContents {
    pub records: Vec<Record>,
    pub torn_tail: Option<TornTail>,
    /// Byte offset just past the last complete record.
    pub end_offset: u64,
}

/// Complete records of a stretch of a log, checked for sequence.
pub(crate) struct Parsed {
    pub records: Vec<Record>,
    pub torn_tail: Option<TornTail>,
    pub end: u64,
}

/// Parses `bytes`, which start at byte `base` and line `first_line` of
/// `file`, and whose first record must carry `first_seq`.
pub(crate) fn parse_lines(
    bytes: &[u8],
    file: &str,
    base: u64,
    first_line: usize,
    first_seq: u64,
) -> Result<Parsed, LogError> {
    let mut records = Vec::new();
    let mut pos = 0usize;
    let mut line_no = first_line;
    let mut torn_tail = None;
    while pos < bytes.len() {
        let rest = &bytes[pos..];
        let Some(nl) = rest.iter().position(|&b| b == b'\n') else {
            torn_tail = Some(TornTail {
                line: line_no,
                offset: base + pos as u64,
                bytes: rest.len() as u64,
                reason: "no newline at the end (the write did not finish)".into(),
            });
            break;
        };
        let line = &rest[..nl];
        let is_last = pos + nl + 1 == bytes.len();
        match decode_line(line) {
            Ok(r) => {
                let expected = first_seq + records.len() as u64;
                if r.seq != expected {
                    return Err(LogError::Damaged {
                        file: file.into(),
                        line: line_no,
                        message: format!(
                            "sequence number {} where {expected} was expected (a record is missing, repeated or out of order)",
                            r.seq
                        ),
                    });
                }
                records.push(r);
            }
            Err(e) if is_last && e.is_checksum() => {
                torn_tail = Some(TornTail {
                    line: line_no,
                    offset: base + pos as u64,
                    bytes: line.len() as u64 + 1,
                    reason: e.to_string(),
                });
                break;
            }
            Err(e) => {
                return Err(LogError::Damaged {
                    file: file.into(),
                    line: line_no,
                    message: damaged_message(&e, line.is_empty()),
                });
            }
        }
        pos += nl + 1;
        line_no += 1;
    }
    let end = torn_tail
        .as_ref()
        .map_or(base + bytes.len() as u64, |t| t.offset);
    Ok(Parsed {
        records,
        torn_tail,
        end,
    })
}

fn damaged_message(e: &DecodeError, empty: bool) -> String {
    if empty {
        "empty line inside the log".into()
    } else if e.is_checksum() {
        format!("damaged record before the end of the log: {e}")
    } else {
        format!("bad record: {e}")
    }
}

/// Parses a whole log held in memory. `file` names it in errors.
pub fn parse_log(bytes: &[u8], file: &str) -> Result<LogContents, LogError> {
    if bytes.is_empty() {
        return Err(LogError::Damaged {
            file: file.into(),
            line: 1,
            message: "empty log: the incident snapshot is missing".into(),
        });
    }
    // The format version is read before anything else, so that a log from a
    // newer program is named as such instead of as damage.
    let first_end = bytes
        .iter()
        .position(|&b| b == b'\n')
        .unwrap_or(bytes.len());
    if let Some(v) = peek_format(&bytes[..first_end])
        && v > u64::from(FORMAT_VERSION)
    {
        return Err(LogError::FutureFormat {
            file: file.into(),
            found: v,
        });
    }
    let parsed = parse_lines(bytes, file, 0, 1, 1)?;
    let Some(first) = parsed.records.first() else {
        let why = parsed
            .torn_tail
            .map_or_else(String::new, |t| format!(": {}", t.reason));
        return Err(LogError::Damaged {
            file: file.into(),
            line: 1,
            message: format!("the incident snapshot (first record) is incomplete{why}"),
        });
    };
    if !matches!(first.event, Event::IncidentOpened { .. }) {
        return Err(LogError::Damaged {
            file: file.into(),
            line: 1,
            message: format!(
                "the first record must be the incident snapshot (`incident_opened`), not `{}`",
                first.event.kind()
            ),
        });
    }
    Ok(LogContents {
        records: parsed.records,
        torn_tail: parsed.torn_tail,
        end_offset: parsed.end,
    })
}

/// Reads a whole log.
pub fn read_log(path: &Path) -> Result<LogContents, LogError> {
    let file = path.display().to_string();
    let bytes = std::fs::read(path).map_err(|source| LogError::Io {
        file: file.clone(),
        source,
    })?;
    parse_log(&bytes, &file)
}

/// New complete records since byte `offset` (the `end_offset` of an earlier
/// read), and the new end offset. A line still being written is not
/// consumed: the next call picks it up. For followers such as `watch`.
///
/// Line numbers in errors count from `offset`; sequence numbers are checked
/// to be gapless within what is read (the caller checks the first against the
/// last it holds).
pub fn read_from(path: &Path, offset: u64) -> Result<(Vec<Record>, u64), LogError> {
    let name = path.display().to_string();
    let io = |source| LogError::Io {
        file: name.clone(),
        source,
    };
    let mut f = std::fs::File::open(path).map_err(io)?;
    let len = f.metadata().map_err(io)?.len();
    if len < offset {
        return Err(LogError::Damaged {
            file: name.clone(),
            line: 0,
            message: format!("the log shrank from {offset} to {len} bytes while being followed"),
        });
    }
    f.seek(SeekFrom::Start(offset)).map_err(io)?;
    let mut bytes = Vec::new();
    f.read_to_end(&mut bytes).map_err(io)?;
    // Only complete lines; a partial last line is left for the next call.
    let complete = bytes.iter().rposition(|&b| b == b'\n').map_or(0, |p| p + 1);
    let bytes = &bytes[..complete];
    let first_seq = match bytes.iter().position(|&b| b == b'\n') {
        Some(nl) => decode_line(&bytes[..nl]).map_or(0, |r| r.seq),
        None => return Ok((Vec::new(), offset)),
    };
    let parsed = parse_lines(bytes, &name, offset, 1, first_seq)?;
    if let Some(t) = parsed.torn_tail {
        return Err(LogError::Damaged {
            file: name,
            line: 0,
            message: format!("record at byte {} is damaged: {}", t.offset, t.reason),
        });
    }
    Ok((parsed.records, parsed.end))
}
