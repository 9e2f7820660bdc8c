//! The one way a command prints JSON: every document carries the version of
//! the JSON output as a top-level `format` member (docs/json-output.md).
//! Documents that are arrays (`timeline --json`, `record --json`) carry it
//! in each element, so a row read on its own still says its format.

use serde::Serialize;

/// Version of the JSON the commands print. Raised only when a member is
/// renamed, removed or changes meaning; added members keep the version.
pub const FORMAT: u32 = 1;

/// `body` with `format` as its first member.
#[derive(Serialize)]
pub struct Versioned<'a, T: Serialize + ?Sized> {
    format: u32,
    #[serde(flatten)]
    body: &'a T,
}

/// Wraps one object with its `format`.
pub fn versioned<T: Serialize + ?Sized>(body: &T) -> Versioned<'_, T> {
    Versioned {
        format: FORMAT,
        body,
    }
}

/// Prints one object, indented.
pub fn print_pretty<T: Serialize + ?Sized>(doc: &T) -> anyhow::Result<()> {
    println!("{}", serde_json::to_string_pretty(&versioned(doc))?);
    Ok(())
}

/// Prints an array on one line, each element with its `format`.
pub fn print_rows<T: Serialize>(rows: &[T]) -> anyhow::Result<()> {
    let rows: Vec<Versioned<'_, T>> = rows.iter().map(versioned).collect();
    println!("{}", serde_json::to_string(&rows)?);
    Ok(())
}
