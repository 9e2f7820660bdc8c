//! Seeded generator of invented incidents, for benchmarks and tests.
//!
//! Every incident it writes is invented: the name says so, the ids are
//! neutral (`cap1`, `kind-a`, `U0001`, `J001`) and the numbers are drawn from
//! a seeded generator, so the same [`GenerateSpec`] always gives the same
//! incident. The shape aims at a workable board: total supply per trait is
//! about 10–40 % above total demand, a share of tasks is short (gamble side)
//! and a share has surplus (hedge side), with tiers, correlation within
//! types, re-rated units, uncertain needs, `accepts` lists and a few units out
//! of service.
//!
//! The generator builds the file mirror ([`IncidentFile`]) and then loads it
//! through the ordinary validating loader, so a generated incident is exactly
//! what a user's file would give.

use super::file::{
    IncidentFile, IncidentHeader, NeedFile, RatingFile, TaskFile, TraitFile, UncertainNeedFile,
    UnitFile, UnitTypeFile,
};
use super::{Incident, LoadError, parse_incident_str};
use rand::rngs::Xoshiro256PlusPlus;
use rand::{RngExt, SeedableRng};
use std::collections::BTreeMap;

/// Size and seed of an invented incident.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct GenerateSpec {
    pub units: usize,
    pub tasks: usize,
    pub traits: usize,
    /// Number of unit types (at least 1).
    pub types: usize,
    pub seed: u64,
    /// Put about 80 % of the available units on tasks (the ground); otherwise
    /// everything starts in reserve.
    pub placed: bool,
}

impl GenerateSpec {
    /// `units × tasks × traits`, with `types` = max(2, traits), seed 0, placed.
    pub fn new(units: usize, tasks: usize, traits: usize) -> Self {
        GenerateSpec {
            units,
            tasks,
            traits,
            types: traits.max(2),
            seed: 0,
            placed: true,
        }
    }
    pub fn seed(mut self, seed: u64) -> Self {
        self.seed = seed;
        self
    }
    pub fn types(mut self, types: usize) -> Self {
        self.types = types;
        self
    }
    pub fn placed(mut self, placed: bool) -> Self {
        self.placed = placed;
        self
    }
}

fn round_to(x: f64, step: f64) -> f64 {
    (x / step).round() * step
}

/// The invented incident as the file mirror (serialize it with serde_yaml).
pub fn generate_file(spec: &GenerateSpec) -> IncidentFile {
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(spec.seed);
    let n_traits = spec.traits.max(1);
    let n_types = spec.types.max(1);
    let trait_ids: Vec<String> = (1..=n_traits).map(|k| format!("cap{k}")).collect();
    // Each trait has its own scale so that amounts look like different units.
    let scale: Vec<f64> = (0..n_traits)
        .map(|k| [1000.0, 10.0, 4.0, 50.0, 2.0, 300.0][k % 6])
        .collect();
    let traits = trait_ids
        .iter()
        .enumerate()
        .map(|(k, id)| TraitFile {
            id: id.clone(),
            label: Some(format!("Invented capability {}", k + 1)),
            unit: Some(format!("u{}/h", k + 1)),
            measurement_sd: None,
        })
        .collect();

    // Each type is strong in one trait (its "main" trait) and may carry a
    // little of one or two others.
    let mut type_ratings: Vec<BTreeMap<String, RatingFile>> = Vec::new();
    let mut unit_types = Vec::new();
    for t in 0..n_types {
        let main = t % n_traits;
        let mut ratings = BTreeMap::new();
        for k in 0..n_traits {
            let strength = if k == main {
                rng.random_range(0.7..1.3)
            } else if rng.random_bool(0.3) {
                rng.random_range(0.05..0.3)
            } else {
                continue;
            };
            let mean = round_to(strength * scale[k], scale[k] / 100.0);
            // Coefficient of variation 5 % (steady) to 60 % (erratic).
            let cv = rng.random_range(0.05..0.6);
            let sd = round_to(cv * mean, scale[k] / 1000.0);
            ratings.insert(
                trait_ids[k].clone(),
                RatingFile {
                    mean: Some(mean),
                    sd: Some(sd),
                },
            );
        }
        let rho = if rng.random_bool(0.5) {
            0.0
        } else {
            round_to(rng.random_range(0.0..0.5), 0.05)
        };
        type_ratings.push(ratings.clone());
        unit_types.push(UnitTypeFile {
            id: format!("kind-{}", type_letter(t)),
            label: Some(format!(
                "Invented unit kind {}",
                type_letter(t).to_uppercase()
            )),
            rho: Some(rho),
            traits: ratings,
            cost: None,
        });
    }

    // Units: types round-robin with a random offset, ~10 % re-rated, ~3 %
    // out of service.
    let mut units = Vec::new();
    let mut unit_type_of = Vec::new();
    let mut supply = vec![0.0; n_traits];
    for i in 0..spec.units {
        let t = (i + rng.random_range(0..n_types)) % n_types;
        let mut overrides = BTreeMap::new();
        if rng.random_bool(0.1) {
            for (tid, r) in &type_ratings[t] {
                let factor = rng.random_range(0.6..1.2);
                overrides.insert(
                    tid.clone(),
                    RatingFile {
                        mean: r.mean.map(|m| round_to(m * factor, 0.01)),
                        sd: r.sd.map(|s| round_to(s * rng.random_range(0.8..2.0), 0.01)),
                    },
                );
            }
        }
        let out = rng.random_bool(0.03);
        for (k, tid) in trait_ids.iter().enumerate() {
            if out {
                continue;
            }
            let r = overrides.get(tid).or_else(|| type_ratings[t].get(tid));
            supply[k] += r.and_then(|r| r.mean).unwrap_or(0.0);
        }
        unit_type_of.push((t, out));
        units.push(UnitFile {
            id: format!("U{:04}", i + 1),
            unit_type: format!("kind-{}", type_letter(t)),
            traits: overrides,
            status: out.then(|| "out_of_service".to_string()),
        });
    }

    // Tasks: one or two needed traits each; demand is spread so that the
    // board as a whole is short by a little or long by a little.
    let mut needed: Vec<Vec<usize>> = Vec::new();
    let mut weight: Vec<Vec<f64>> = Vec::new();
    let mut demand_weight = vec![0.0; n_traits];
    for j in 0..spec.tasks {
        let first = j % n_traits;
        let mut ks = vec![first];
        if n_traits > 1 && rng.random_bool(0.4) {
            let second = (first + 1 + rng.random_range(0..n_traits - 1)) % n_traits;
            ks.push(second);
        }
        let ws: Vec<f64> = ks
            .iter()
            .map(|_| rng.random_range(0.4..1.6))
            .collect::<Vec<_>>();
        for (k, w) in ks.iter().zip(&ws) {
            demand_weight[*k] += w;
        }
        needed.push(ks);
        weight.push(ws);
    }
    let looseness: f64 = rng.random_range(1.1..1.4);
    let mut tasks = Vec::new();
    for j in 0..spec.tasks {
        let mut needs = BTreeMap::new();
        for (k, w) in needed[j].iter().zip(&weight[j]) {
            let share = supply[*k] / demand_weight[*k].max(1e-9) / looseness;
            let need = round_to((w * share).max(scale[*k] / 10.0), scale[*k] / 100.0);
            let file = if rng.random_bool(0.25) {
                NeedFile::Uncertain(UncertainNeedFile {
                    need,
                    sd: Some(round_to(need * rng.random_range(0.02..0.15), 0.01)),
                })
            } else {
                NeedFile::Certain(need)
            };
            needs.insert(trait_ids[*k].clone(), file);
        }
        let tier = match rng.random_range(0..10) {
            0..=1 => "life",
            2..=4 => "stabilization",
            _ => "property",
        };
        // A few tasks accept only the types strong in what they need (and
        // always at least one such type, so they can be staffed).
        let accepts = (n_types > 1 && rng.random_bool(0.2)).then(|| {
            let mut list: Vec<String> = (0..n_types)
                .filter(|t| needed[j].contains(&(t % n_traits)))
                .map(|t| format!("kind-{}", type_letter(t)))
                .collect();
            if list.is_empty() {
                list.push(format!("kind-{}", type_letter(needed[j][0] % n_types)));
            }
            list
        });
        let max_units = rng
            .random_bool(0.15)
            .then(|| (spec.units / spec.tasks.max(1)).max(2) as i64 * 2);
        let min_units = rng.random_bool(0.1).then_some(2);
        tasks.push(TaskFile {
            id: format!("J{:03}", j + 1),
            label: Some(format!("Invented task {}", j + 1)),
            tier: Some(tier.to_string()),
            needs,
            accepts,
            min_units,
            max_units,
            outcome: None,
        });
    }

    let mut placement = BTreeMap::new();
    if spec.placed && !tasks.is_empty() {
        let mut load = vec![0i64; tasks.len()];
        for (i, (t, out)) in unit_type_of.iter().enumerate() {
            if *out || !rng.random_bool(0.8) {
                continue;
            }
            let type_id = format!("kind-{}", type_letter(*t));
            let j = rng.random_range(0..tasks.len());
            let task = &tasks[j];
            let accepted = task.accepts.as_ref().is_none_or(|a| a.contains(&type_id));
            let room = task.max_units.is_none_or(|m| load[j] < m);
            if accepted && room {
                load[j] += 1;
                placement.insert(units[i].id.clone(), Some(task.id.clone()));
            }
        }
    }

    IncidentFile {
        incident: IncidentHeader {
            name: format!(
                "Invented incident {}x{}x{} (seed {})",
                spec.units, spec.tasks, n_traits, spec.seed
            ),
            started: None,
            reserve_min: None,
            secure: None,
        },
        traits,
        unit_types,
        units,
        tasks,
        placement,
        pins: BTreeMap::new(),
    }
}

fn type_letter(t: usize) -> String {
    let letters = b"abcdefghijklmnopqrstuvwxyz";
    if t < 26 {
        (letters[t] as char).to_string()
    } else {
        format!("{}{}", letters[t % 26] as char, t / 26)
    }
}

/// The invented incident as YAML text.
pub fn generate_yaml(spec: &GenerateSpec) -> String {
    // Serializing plain data structures cannot fail.
    serde_yaml::to_string(&generate_file(spec)).unwrap_or_default()
}

/// The invented incident, loaded through the validating loader.
pub fn generate(spec: &GenerateSpec) -> Result<Incident, LoadError> {
    parse_incident_str(&generate_yaml(spec), "generated.yaml")
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn same_seed_same_incident_and_it_loads() {
        let spec = GenerateSpec::new(40, 6, 3).seed(7);
        assert_eq!(generate_yaml(&spec), generate_yaml(&spec));
        let inc = generate(&spec).expect("generated incident loads");
        assert_eq!(inc.units.len(), 40);
        assert_eq!(inc.tasks.len(), 6);
        assert_eq!(inc.traits.len(), 3);
        assert!(inc.placement.0.iter().any(Option::is_some));
        assert_ne!(
            generate_yaml(&spec),
            generate_yaml(&GenerateSpec::new(40, 6, 3).seed(8))
        );
    }

    #[test]
    fn large_sizes_load() {
        for (u, t, k) in [(100, 15, 4), (600, 40, 5), (30, 6, 3), (3, 1, 1)] {
            let inc = generate(&GenerateSpec::new(u, t, k).seed(1)).expect("loads");
            assert_eq!(inc.units.len(), u);
        }
    }
}
