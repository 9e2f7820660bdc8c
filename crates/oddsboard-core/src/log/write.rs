//! The append-only writer.
//!
//! Every append holds an advisory exclusive lock on the log file across:
//! read what other writers appended since → fold it → check the new event
//! applies → write the line → sync. So writers never interleave, duplicate or
//! skip a sequence number, and nothing returns before the data is on disk.

use super::LogError;
use super::apply::apply;
use super::codec::{Record, encode_line, log_time};
use super::event::{Event, FORMAT_VERSION};
use super::read::{TornTail, parse_lines, parse_log};
use super::replay::{Replay, fold};
use super::snapshot;
use crate::model::Incident;
use chrono::{DateTime, Utc};
use std::fs::{File, OpenOptions};
use std::io::{Read, Seek, SeekFrom, Write};
use std::path::{Path, PathBuf};

/// Releases the advisory lock when dropped, on every path out.
struct Locked<'a>(&'a File);

impl<'a> Locked<'a> {
    fn take(file: &'a File, name: &str) -> Result<Self, LogError> {
        file.lock().map_err(|source| LogError::Io {
            file: name.into(),
            source,
        })?;
        Ok(Locked(file))
    }
}

impl Drop for Locked<'_> {
    fn drop(&mut self) {
        let _ = self.0.unlock();
    }
}

/// Appends records to one log; keeps the state at its end.
#[derive(Debug)]
pub struct LogWriter {
    path: PathBuf,
    name: String,
    file: File,
    state: Incident,
    /// The state of the snapshot record, until a caller takes it (a
    /// dashboard replays the log from it without loading the snapshot again).
    first_state: Option<Incident>,
    last_seq: u64,
    /// Time of the last record this writer knows of.
    last_at: Option<DateTime<Utc>>,
    end_offset: u64,
    repaired: Option<TornTail>,
}

fn sync_parent(path: &Path) {
    // Makes the new directory entry durable; best effort where directories
    // cannot be opened (not on the platforms we build for).
    let parent = match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p,
        _ => Path::new("."),
    };
    if let Ok(dir) = File::open(parent) {
        let _ = dir.sync_all();
    }
}

impl LogWriter {
    /// Creates a new log whose first record is `incident`; refuses to
    /// overwrite an existing file. The file gets the user's umask.
    pub fn create(path: &Path, incident: &Incident, by: &str) -> Result<LogWriter, LogError> {
        Self::create_at(path, incident, by, None)
    }

    /// [`LogWriter::create`] with the snapshot stamped `at` instead of now
    /// (recording a drill or an exercise after the fact).
    pub fn create_at(
        path: &Path,
        incident: &Incident,
        by: &str,
        at: Option<DateTime<Utc>>,
    ) -> Result<LogWriter, LogError> {
        let name = path.display().to_string();
        let file_form = snapshot::to_file(incident);
        // The state is what a reader will rebuild from the snapshot.
        let state =
            snapshot::from_file(&file_form, &name).map_err(|message| LogError::Refused {
                seq: 1,
                message: format!("the incident cannot be written as a snapshot: {message}"),
            })?;
        let file = OpenOptions::new()
            .read(true)
            .append(true)
            .create_new(true)
            .open(path)
            .map_err(|source| {
                if source.kind() == std::io::ErrorKind::AlreadyExists {
                    LogError::Exists { file: name.clone() }
                } else {
                    LogError::Io {
                        file: name.clone(),
                        source,
                    }
                }
            })?;
        let record = Record {
            seq: 1,
            at: log_time(at.unwrap_or_else(Utc::now)),
            by: by.to_string(),
            event: Event::IncidentOpened {
                format: FORMAT_VERSION,
                incident: Box::new(file_form),
            },
        };
        let line = encode_line(&record);
        let written = {
            let _lock = Locked::take(&file, &name)?;
            (&file)
                .write_all(line.as_bytes())
                .and_then(|()| file.sync_all())
        };
        if let Err(source) = written {
            // Nothing half-written stays behind.
            let _ = std::fs::remove_file(path);
            return Err(LogError::Io { file: name, source });
        }
        sync_parent(path);
        Ok(LogWriter {
            path: path.to_path_buf(),
            name,
            file,
            first_state: Some(state.clone()),
            state,
            last_seq: 1,
            last_at: Some(record.at),
            end_offset: line.len() as u64,
            repaired: None,
        })
    }

    /// Opens an existing log for appending. A torn tail is cut off (it was
    /// never accepted) when the next append takes the lock; see
    /// [`LogWriter::repaired_tail`].
    pub fn open(path: &Path) -> Result<LogWriter, LogError> {
        let name = path.display().to_string();
        let io = |source| LogError::Io {
            file: name.clone(),
            source,
        };
        let file = OpenOptions::new()
            .read(true)
            .append(true)
            .open(path)
            .map_err(io)?;
        let contents = {
            let _lock = Locked::take(&file, &name)?;
            let mut bytes = Vec::new();
            (&file).seek(SeekFrom::Start(0)).map_err(io)?;
            (&file).read_to_end(&mut bytes).map_err(io)?;
            parse_log(&bytes, &name)?
        };
        let (first_state, state) =
            fold_from_start(&contents.records).map_err(|e| e.in_file(&name))?;
        Ok(LogWriter {
            path: path.to_path_buf(),
            name,
            file,
            first_state: Some(first_state),
            state,
            last_seq: contents.records.last().map_or(0, |r| r.seq),
            last_at: contents.records.last().map(|r| r.at),
            end_offset: contents.end_offset,
            repaired: None,
        })
    }

    pub fn path(&self) -> &Path {
        &self.path
    }
    /// The state after the last record this writer knows of.
    pub fn state(&self) -> &Incident {
        &self.state
    }
    /// The state of the snapshot record (the log's first), once.
    pub fn take_first_state(&mut self) -> Option<Incident> {
        self.first_state.take()
    }
    pub fn last_seq(&self) -> u64 {
        self.last_seq
    }
    /// The torn tail this writer cut off before appending, if it did.
    pub fn repaired_tail(&self) -> Option<&TornTail> {
        self.repaired.as_ref()
    }

    /// Reads and folds what other writers appended; call with the lock held.
    fn catch_up(&mut self) -> Result<Vec<Record>, LogError> {
        let io = |source| LogError::Io {
            file: self.name.clone(),
            source,
        };
        let len = self.file.metadata().map_err(io)?.len();
        if len < self.end_offset {
            return Err(LogError::Damaged {
                file: self.name.clone(),
                line: 0,
                message: format!(
                    "the log shrank from {} to {len} bytes under this writer",
                    self.end_offset
                ),
            });
        }
        if len == self.end_offset {
            return Ok(Vec::new());
        }
        let mut bytes = Vec::with_capacity((len - self.end_offset) as usize);
        (&self.file)
            .seek(SeekFrom::Start(self.end_offset))
            .map_err(io)?;
        (&self.file).read_to_end(&mut bytes).map_err(io)?;
        let parsed = parse_lines(
            &bytes,
            &self.name,
            self.end_offset,
            self.last_seq as usize + 1,
            self.last_seq + 1,
        )?;
        let mut state = self.state.clone();
        for r in &parsed.records {
            apply(&mut state, &r.event).map_err(|e| LogError::Damaged {
                file: self.name.clone(),
                line: r.seq as usize,
                message: format!("`{}` does not apply: {e}", r.event.kind()),
            })?;
        }
        if let Some(torn) = parsed.torn_tail {
            // We hold the lock, so no writer is mid-line: these bytes are
            // what a crashed writer left. Cut them so the next line starts
            // clean.
            self.file.set_len(torn.offset).map_err(io)?;
            self.file.sync_all().map_err(io)?;
            self.repaired = Some(torn);
        }
        self.state = state;
        if let Some(r) = parsed.records.last() {
            self.last_at = Some(r.at);
        }
        self.last_seq += parsed.records.len() as u64;
        self.end_offset = parsed.end;
        Ok(parsed.records)
    }

    /// Appends one event after checking it applies to the state at the end of
    /// the log (including what others appended). Returns only once the record
    /// is synced to disk. A refused event leaves the file untouched.
    pub fn append(&mut self, by: &str, event: Event) -> Result<Record, LogError> {
        self.append_at(by, event, None)
    }

    /// [`LogWriter::append`] with the record stamped `at` instead of now,
    /// for recording a drill after the fact. Refused when `at` is earlier
    /// than the last record's time (including what other writers appended):
    /// a log's times never go backwards.
    pub fn append_at(
        &mut self,
        by: &str,
        event: Event,
        at: Option<DateTime<Utc>>,
    ) -> Result<Record, LogError> {
        let file = self.file.try_clone().map_err(|source| LogError::Io {
            file: self.name.clone(),
            source,
        })?;
        let _lock = Locked::take(&file, &self.name)?;
        self.catch_up()?;
        let at = log_time(at.unwrap_or_else(Utc::now));
        if let Some(last) = self.last_at
            && at < last
        {
            return Err(LogError::TimeBackwards {
                file: self.name.clone(),
                at: at.to_rfc3339_opts(chrono::SecondsFormat::Millis, true),
                seq: self.last_seq,
                last: last.to_rfc3339_opts(chrono::SecondsFormat::Millis, true),
            });
        }
        let mut next = self.state.clone();
        apply(&mut next, &event).map_err(|e| LogError::EventRefused {
            file: self.name.clone(),
            kind: event.kind(),
            reason: e,
        })?;
        let record = Record {
            seq: self.last_seq + 1,
            at,
            by: by.to_string(),
            event,
        };
        let line = encode_line(&record);
        let io = |source| LogError::Io {
            file: self.name.clone(),
            source,
        };
        if let Err(source) = (&file)
            .write_all(line.as_bytes())
            .and_then(|()| file.sync_data())
        {
            // Take back a partial line so the log stays as it was.
            let _ = file.set_len(self.end_offset);
            let _ = file.sync_all();
            return Err(io(source));
        }
        self.state = next;
        self.last_seq = record.seq;
        self.last_at = Some(record.at);
        self.end_offset += line.len() as u64;
        Ok(record)
    }
}

/// The states after the snapshot record and after the last record.
fn fold_from_start(records: &[Record]) -> Result<(Incident, Incident), LogError> {
    let Some((first, rest)) = records.split_first() else {
        return fold(records).map(|s| (s.clone(), s));
    };
    let mut replay = Replay::start(first)?;
    let start = replay.state.clone();
    for r in rest {
        replay.step(r)?;
    }
    Ok((start, replay.state))
}
