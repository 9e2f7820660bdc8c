//! Seeded generator of invented incident logs, for benchmarks and tests:
//! a plausible mix of events, every one checked with [`apply`] before it is
//! kept, so the log always replays.

use super::apply::apply;
use super::codec::Record;
use super::event::{Event, FORMAT_VERSION, Move, OutcomeValue, StatusValue};
use super::snapshot;
use crate::model::file::UnitFile;
use crate::model::{Incident, UnitStatus};
use chrono::{DateTime, Duration, Utc};
use rand::rngs::Xoshiro256PlusPlus;
use rand::{RngExt, SeedableRng};

fn pick<'a, T>(rng: &mut Xoshiro256PlusPlus, v: &'a [T]) -> Option<&'a T> {
    if v.is_empty() {
        None
    } else {
        Some(&v[rng.random_range(0..v.len())])
    }
}

fn random_move(rng: &mut Xoshiro256PlusPlus, s: &Incident) -> Option<Move> {
    let u = rng.random_range(0..s.units.len().max(1));
    let unit = s.units.get(u)?;
    let u = crate::model::UnitIdx::new(u);
    if unit.status != UnitStatus::Available {
        return None;
    }
    let open: Vec<crate::model::TaskIdx> = crate::model::TaskIdx::range(s.tasks.len())
        .filter(|&t| s.may_place(u, t))
        .collect();
    let to = if rng.random_bool(0.2) {
        None
    } else {
        pick(rng, &open).copied()
    };
    let from = s.placement.get(u);
    (from != to).then(|| Move {
        unit: unit.id.clone(),
        from: from.map(|t| s.tasks[t].id.clone()),
        to: to.map(|t| s.tasks[t].id.clone()),
    })
}

fn random_event(rng: &mut Xoshiro256PlusPlus, s: &Incident, last: Option<&Event>) -> Option<Event> {
    // A proposal is usually answered by the next record.
    if let Some(Event::PlanProposed { moves }) = last {
        let r: f64 = rng.random();
        if r < 0.6 {
            return Some(Event::PlanAccepted {
                moves: moves.clone(),
            });
        } else if r < 0.85 {
            return Some(Event::PlanRejected {});
        }
    }
    let r: f64 = rng.random();
    // A lost unit's tombstone is drawn like any slot, then given up.
    let unit_id = |rng: &mut Xoshiro256PlusPlus| {
        pick(rng, &s.units)
            .filter(|u| !u.is_lost())
            .map(|u| u.id.clone())
    };
    let open: Vec<&str> = s
        .tasks
        .iter()
        .filter(|t| t.is_open())
        .map(|t| t.id.as_str())
        .collect();
    let trait_id = |rng: &mut Xoshiro256PlusPlus| pick(rng, &s.traits).map(|t| t.id.clone());
    Some(if r < 0.35 {
        let m = random_move(rng, s)?;
        Event::Moved {
            unit: m.unit,
            to: m.to,
        }
    } else if r < 0.47 {
        let n = rng.random_range(1..=3);
        let moves: Vec<Move> = (0..n).filter_map(|_| random_move(rng, s)).collect();
        let mut seen = Vec::new();
        let moves = moves
            .into_iter()
            .filter(|m| {
                let fresh = !seen.contains(&m.unit);
                seen.push(m.unit.clone());
                fresh
            })
            .collect();
        Event::PlanProposed { moves }
    } else if r < 0.57 {
        let u = rng.random_range(0..s.units.len().max(1));
        let unit = s.units.get(u).filter(|u| !u.is_lost())?;
        let k = rng.random_range(0..s.traits.len());
        let old = unit.ratings[k];
        Event::UnitRerated {
            unit: unit.id.clone(),
            trait_id: s.traits[k].id.clone(),
            mean: Some((old.mean * rng.random_range(0.85..1.15)).round()),
            sd: Some((old.sd * rng.random_range(0.8..1.25)).round()),
        }
    } else if r < 0.67 {
        let t = pick(rng, &open)?;
        let ti = s.task_idx(t)?;
        let k = rng.random_range(0..s.traits.len());
        let old = s.tasks[ti].needs[k];
        if !old.counts() {
            return None;
        }
        Event::NeedChanged {
            task: t.to_string(),
            trait_id: s.traits[k].id.clone(),
            need: (old.need * rng.random_range(0.85..1.15)).round(),
            sd: Some(old.sd),
        }
    } else if r < 0.77 {
        Event::Note {
            text: format!("Invented radio traffic #{}", rng.random_range(0..10_000u32)),
        }
    } else if r < 0.82 {
        if rng.random_bool(0.5) {
            let (&u, _) = s.pins.iter().next()?;
            Event::Unpinned {
                unit: s.units[u].id.clone(),
            }
        } else {
            let u = crate::model::UnitIdx::new(rng.random_range(0..s.units.len().max(1)));
            let t = s.placement.get(u)?;
            Event::Pinned {
                unit: s.units[u].id.clone(),
                task: s.tasks[t].id.clone(),
            }
        }
    } else if r < 0.86 {
        let u = rng.random_range(0..s.units.len().max(1));
        let unit = s.units.get(u)?;
        Event::UnitStatus {
            unit: unit.id.clone(),
            status: match unit.status {
                UnitStatus::Available => StatusValue::OutOfService,
                UnitStatus::OutOfService => StatusValue::Available,
                UnitStatus::Lost => return None,
            },
        }
    } else if r < 0.89 {
        let ty = pick(rng, &s.unit_types)?;
        Event::UnitAdded {
            unit: UnitFile {
                id: format!("R{:05}", rng.random_range(0..100_000u32)),
                unit_type: ty.id.clone(),
                traits: Default::default(),
                status: None,
            },
        }
    } else if r < 0.905 {
        Event::UnitLost {
            unit: unit_id(rng)?,
            reason: Some("invented breakdown".into()),
        }
    } else if r < 0.93 {
        let k = trait_id(rng)?;
        let mean_unit: f64 = s
            .roster()
            .map(|(_, u)| u.ratings[s.trait_idx(&k).unwrap_or(0)].mean)
            .sum::<f64>()
            / s.roster().count().max(1) as f64;
        Event::TaskAdded {
            task: crate::model::file::TaskFile {
                id: format!("N{:04}", rng.random_range(0..10_000u32)),
                label: Some("Invented new task".into()),
                tier: Some(["life", "stabilization", "property"][rng.random_range(0..3)].into()),
                needs: [(
                    k,
                    crate::model::file::NeedFile::Certain((mean_unit * 2.0).round().max(1.0)),
                )]
                .into_iter()
                .collect(),
                accepts: None,
                min_units: None,
                max_units: None,
                outcome: None,
            },
        }
    } else if r < 0.955 {
        if open.len() <= s.tasks.len().min(10) {
            return None;
        }
        let t = pick(rng, &open)?;
        Event::TaskClosed {
            task: t.to_string(),
            outcome: [
                OutcomeValue::Succeeded,
                OutcomeValue::Succeeded,
                OutcomeValue::Failed,
                OutcomeValue::Cancelled,
            ][rng.random_range(0..4)],
        }
    } else {
        let m = random_move(rng, s)?;
        Event::Moved {
            unit: m.unit,
            to: m.to,
        }
    })
}

/// An invented log of `records` records (the snapshot included) starting
/// from `incident`, seeded: the same arguments always give the same log.
/// Returns the records and the state at the end.
pub fn generate_log(
    incident: &Incident,
    records: usize,
    seed: u64,
    start: DateTime<Utc>,
) -> (Vec<Record>, Incident) {
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);
    let file = snapshot::to_file(incident);
    let mut state = snapshot::from_file(&file, "generated").unwrap_or_else(|_| incident.clone());
    let mut out = Vec::with_capacity(records);
    out.push(Record {
        seq: 1,
        at: start,
        by: "generator".into(),
        event: Event::IncidentOpened {
            format: FORMAT_VERSION,
            incident: Box::new(file),
        },
    });
    let actors = ["ic", "ops-chief", "radio", "oddsboard"];
    let mut tries = 0usize;
    while out.len() < records && tries < records * 50 {
        tries += 1;
        let last = out.last().map(|r: &Record| &r.event);
        let Some(e) = random_event(&mut rng, &state, last) else {
            continue;
        };
        if apply(&mut state, &e).is_err() {
            continue;
        }
        let seq = out.len() as u64 + 1;
        let by = match e {
            Event::PlanProposed { .. } => "oddsboard",
            _ => actors[rng.random_range(0..3)],
        };
        out.push(Record {
            seq,
            at: start + Duration::seconds(seq as i64 * 2),
            by: by.into(),
            event: e,
        });
    }
    (out, state)
}
