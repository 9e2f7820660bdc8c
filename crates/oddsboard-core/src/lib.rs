//! oddsboard-core: risk-adaptive placement of response units during an emergency
//! incident.
//!
//! An incident commander places units (engines, tenders, rescue teams…) on
//! tasks that each need minimum amounts of some capabilities. Each unit's
//! capability is uncertain (a mean and a spread); oddsboard computes each
//! task's odds of having all its needs met and recommends the placement that
//! makes the worst task's odds as high as possible, tier by tier.
//!
//! This crate is the whole computation and nothing of the terminal: the
//! `oddsboard` binary (command line and dashboard) is a thin shell over it,
//! and its manifest names no terminal, runtime or argument-parsing crate.
//!
//! Main modules:
//! * [`model`]: the incident (traits, unit types, units, tasks, placement,
//!   pins), loaded and validated from YAML with located errors.
//! * [`odds`]: the probability model: ln Φ, per-task tallies, task odds and
//!   regime (hedge or gamble).
//! * [`solver`]: the objective key, exact and anytime searches, baselines.
//! * [`log`]: the append-only incident log: events, records, replay.
//! * [`report`]: timeline and after-action report.
//! * [`advise`]: fragility, resource requests, what-if.
//! * [`rules`]: where a unit may go, capacities, the reserve, pins — each
//!   constraint written once.
//! * [`safety`]: the cautions and contextual safety notes, worded once.
//!
//! Decision support only: the odds are only as good as the ratings, and the
//! plan never replaces the incident commander's judgement.
//!
//! ```
//! use oddsboard_core::model::parse_incident_str;
//! use oddsboard_core::odds::evaluate;
//!
//! let yaml = r#"
//! incident: { name: Invented drill }
//! traits: [ { id: water, unit: L/min } ]
//! unit_types:
//!   - { id: engine, traits: { water: { mean: 1900, sd: 250 } } }
//! units: [ { id: E1, type: engine }, { id: E2, type: engine } ]
//! tasks: [ { id: T1, tier: life, needs: { water: 3000 } } ]
//! placement: { E1: T1, E2: T1 }
//! "#;
//! let incident = parse_incident_str(yaml, "drill.yaml").unwrap();
//! let odds = evaluate(&incident, &incident.placement);
//! // 3800 L/min expected against 3000 needed, sd 250·√2: z ≈ 2.263.
//! assert!((odds[0].odds() - 0.98817).abs() < 1e-4);
//! ```

pub mod advise;
pub mod clean;
pub mod log;
pub mod model;
pub mod odds;
pub mod report;
pub mod rules;
pub mod safety;
pub mod solver;
