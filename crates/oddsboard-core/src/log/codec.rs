//! The record codec: one JSON object per line.
//!
//! ```text
//! {"seq":7,"at":"2026-05-14T09:31:12.250Z","by":"ic","event":{"kind":"moved","unit":"E1","to":"T2"},"crc":"1c291ca3"}
//! ```
//!
//! The checksum is CRC-32 (IEEE 802.3 polynomial, as in zlib and PNG) of the
//! line's bytes with the trailing `,"crc":"…"` member removed, i.e. of the
//! JSON object `{"seq":…,"event":{…}}` exactly as written. Checking the bytes
//! (not a re-serialisation) means any change to the line is caught.

use super::event::Event;
use chrono::{DateTime, SecondsFormat, Utc};
use serde::{Deserialize, Serialize};

/// One record of the log.
#[derive(Debug, Clone, PartialEq)]
pub struct Record {
    /// 1 for the snapshot, then gapless.
    pub seq: u64,
    /// When the record was written (UTC, millisecond precision).
    pub at: DateTime<Utc>,
    /// Who wrote it: an operator's name, a feed's name.
    pub by: String,
    pub event: Event,
}

/// The wire form, without the checksum.
#[derive(Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
struct Wire<'a> {
    seq: u64,
    at: String,
    #[serde(borrow)]
    by: std::borrow::Cow<'a, str>,
    event: Event,
}

#[derive(Serialize)]
struct WireRef<'a> {
    seq: u64,
    at: String,
    by: &'a str,
    event: &'a Event,
}

/// Why one line is not a good record.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum DecodeError {
    #[error("no checksum at the end of the line (expected `,\"crc\":\"xxxxxxxx\"}}`)")]
    NoChecksum,
    #[error("checksum mismatch: the line says {written:08x}, its content gives {computed:08x}")]
    Checksum { written: u32, computed: u32 },
    #[error("not UTF-8 text")]
    NotText,
    #[error("{0}")]
    Json(String),
    #[error("`at` is not an RFC 3339 time: {0}")]
    Time(String),
}

impl DecodeError {
    /// A checksum problem: what a record torn by a crash looks like.
    pub fn is_checksum(&self) -> bool {
        matches!(self, DecodeError::NoChecksum | DecodeError::Checksum { .. })
    }
}

const CRC_PREFIX: &[u8] = b",\"crc\":\"";
/// `,"crc":"` + 8 hex digits + `"}`.
const CRC_TAIL_LEN: usize = CRC_PREFIX.len() + 8 + 2;

/// Rounds a time to what the log stores (milliseconds), so a record read
/// back equals the one written.
pub fn log_time(t: DateTime<Utc>) -> DateTime<Utc> {
    let ms = t.timestamp_millis();
    DateTime::from_timestamp_millis(ms).unwrap_or(t)
}

/// Encodes a record as one line, with its checksum and the final newline.
pub fn encode_line(record: &Record) -> String {
    let wire = WireRef {
        seq: record.seq,
        at: record.at.to_rfc3339_opts(SecondsFormat::Millis, true),
        by: &record.by,
        event: &record.event,
    };
    // Serialising plain data with string keys cannot fail.
    let mut body = serde_json::to_string(&wire).unwrap_or_default();
    let crc = crc32fast::hash(body.as_bytes());
    body.pop(); // the closing brace; the checksum member goes before it
    body.push_str(&format!(",\"crc\":\"{crc:08x}\"}}\n"));
    body
}

/// Decodes one line (without its newline): checksum first, then the JSON.
pub fn decode_line(line: &[u8]) -> Result<Record, DecodeError> {
    let n = line.len();
    if n < CRC_TAIL_LEN + 2
        || &line[n - CRC_TAIL_LEN..n - 10] != CRC_PREFIX
        || &line[n - 2..] != b"\"}"
    {
        return Err(DecodeError::NoChecksum);
    }
    let hex = std::str::from_utf8(&line[n - 10..n - 2]).map_err(|_| DecodeError::NoChecksum)?;
    let written = u32::from_str_radix(hex, 16).map_err(|_| DecodeError::NoChecksum)?;
    let mut hasher = crc32fast::Hasher::new();
    hasher.update(&line[..n - CRC_TAIL_LEN]);
    hasher.update(b"}");
    let computed = hasher.finalize();
    if computed != written {
        return Err(DecodeError::Checksum { written, computed });
    }
    let body = std::str::from_utf8(&line[..n - CRC_TAIL_LEN]).map_err(|_| DecodeError::NotText)?;
    let mut text = String::with_capacity(body.len() + 1);
    text.push_str(body);
    text.push('}');
    let wire: Wire = serde_json::from_str(&text).map_err(|e| DecodeError::Json(e.to_string()))?;
    let at = DateTime::parse_from_rfc3339(&wire.at)
        .map_err(|e| DecodeError::Time(format!("`{}`: {e}", wire.at)))?
        .with_timezone(&Utc);
    Ok(Record {
        seq: wire.seq,
        at,
        by: wire.by.into_owned(),
        event: wire.event,
    })
}

/// Reads `event.format` of a line without checking anything else, so that a
/// log from a newer program is recognised even if its records look different.
pub fn peek_format(line: &[u8]) -> Option<u64> {
    let v: serde_json::Value = serde_json::from_slice(line).ok()?;
    v.get("event")?.get("format")?.as_u64()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn sample() -> Record {
        Record {
            seq: 7,
            at: log_time(Utc::now()),
            by: "ic \"north\"".into(),
            event: Event::Moved {
                unit: "E1".into(),
                to: Some("T2".into()),
            },
        }
    }

    #[test]
    fn round_trip() {
        let r = sample();
        let line = encode_line(&r);
        assert!(line.ends_with("\"}\n"));
        assert_eq!(line.matches('\n').count(), 1);
        let back = decode_line(line.trim_end_matches('\n').as_bytes()).expect("decodes");
        assert_eq!(back, r);
    }

    #[test]
    fn checksum_is_crc32_of_the_body() {
        // The CRC-32 check value of "123456789" is cbf43926 (the catalogue
        // value of CRC-32/ISO-HDLC, Greg Cook's CRC catalogue).
        assert_eq!(crc32fast::hash(b"123456789"), 0xcbf4_3926);
        let line = encode_line(&sample());
        let body_end = line.len() - 1 - CRC_TAIL_LEN;
        let mut body = line[..body_end].to_string();
        body.push('}');
        let crc = format!("{:08x}", crc32fast::hash(body.as_bytes()));
        assert!(line.contains(&crc));
    }

    #[test]
    fn any_changed_byte_is_caught() {
        let line = encode_line(&sample());
        let bytes = line.trim_end_matches('\n').as_bytes().to_vec();
        for i in 0..bytes.len() {
            let mut b = bytes.clone();
            b[i] ^= 0x01;
            assert!(decode_line(&b).is_err(), "flip at {i} accepted");
        }
    }
}
