//! Field readings (`observed` events) and the exact Gaussian posterior they
//! give (SPEC §2, "Observations"; derivation in docs/model.md).
//!
//! Per (unit type t, trait k) the prior is
//! `value_i = m_i + s_i·(√ρ·Z + √(1−ρ)·U_i)`, Z and the U_i independent
//! standard normals. A reading is `y = value_i + e`, e ~ Normal(0, sd²). Given
//! Z the U_i stay independent (each is informed by its own readings only), so
//! the posterior keeps the prior's shape: one shared standard normal W per
//! (type, trait) and independent own parts,
//! `value_i = mean_i + load_i·W + own_i·V_i`. A [`Belief`] is that triple;
//! with no readings it is the rating itself (`load = s√ρ`, `own = s√(1−ρ)`).
//! Every consumer of the model (tallies, full recompute, joint odds, the
//! simulator, the solver's bounds) reads capabilities through
//! [`super::Incident::belief`], so the fold stays the one place the posterior
//! is made.

use super::{Incident, Rating, TraitIdx, TypeIdx, UnitIdx};
use std::collections::BTreeMap;

/// Current belief about one unit's capability in one trait:
/// `mean + load·W + own·V`, W the (type, trait) shared factor, V the unit's
/// own, both standard normal and independent. `load ≥ 0`, `own ≥ 0`.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Belief {
    pub mean: f64,
    /// Loading on the (type, trait) shared factor.
    pub load: f64,
    /// Sd of the unit's own, independent part.
    pub own: f64,
}

impl Belief {
    /// The rating itself, before any reading (SPEC §2's decomposition).
    pub fn prior(r: Rating, rho: f64) -> Belief {
        Belief {
            mean: r.mean,
            load: r.sd * rho.sqrt(),
            own: r.sd * (1.0 - rho).sqrt(),
        }
    }
    /// Total sd of the unit's capability.
    pub fn sd(&self) -> f64 {
        self.load.hypot(self.own)
    }
    /// Whether the capability is uncertain at all.
    pub fn has_spread(&self) -> bool {
        self.load > 0.0 || self.own > 0.0
    }
}

/// One applied reading; `sd` is resolved at the time it was applied (the
/// event's, else the trait's `measurement_sd`, else the unit's rated sd).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Reading {
    pub unit: UnitIdx,
    pub trait_idx: TraitIdx,
    pub value: f64,
    pub sd: f64,
}

/// Running precision-weighted summary of one unit's readings.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
struct Summary {
    /// Σ 1/sd² and Σ value/sd² over readings with sd > 0.
    w: f64,
    wy: f64,
    /// Count and Σ value of exact readings (sd 0).
    n0: u32,
    y0: f64,
}

impl Summary {
    fn add(&mut self, r: &Reading) {
        if r.sd > 0.0 {
            let p = 1.0 / (r.sd * r.sd);
            self.w += p;
            self.wy += p * r.value;
        } else {
            self.n0 += 1;
            self.y0 += r.value;
        }
    }
    /// (ȳ, E): the readings' precision-weighted mean and its noise
    /// variance. Exact readings (sd 0), if any, decide alone (their mean,
    /// E = 0).
    fn get(&self) -> Option<(f64, f64)> {
        if self.n0 > 0 {
            Some((self.y0 / f64::from(self.n0), 0.0))
        } else if self.w > 0.0 {
            Some((self.wy / self.w, 1.0 / self.w))
        } else {
            None
        }
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Default)]
struct UnitCell {
    sum: Summary,
    belief: Belief,
}

/// Posterior of one (type, trait) with readings.
#[derive(Debug, Clone, PartialEq)]
struct Cell {
    /// Posterior mean and sd of the standardised shared factor Z.
    z_mean: f64,
    z_sd: f64,
    /// Information form of Z's posterior: Σ h²/D and Σ h(ȳ − m)/D over the
    /// observed units (precision 1 + the first, mean the second over it).
    prec: f64,
    info: f64,
    /// Some unit has D = 0 (ρ = 1 and an exact reading): Z is known and the
    /// information form does not hold; such a cell is rebuilt in full.
    degenerate: bool,
    /// The units with readings (and a rated spread).
    units: BTreeMap<UnitIdx, UnitCell>,
}

impl Cell {
    fn empty() -> Cell {
        Cell {
            z_mean: 0.0,
            z_sd: 1.0,
            prec: 0.0,
            info: 0.0,
            degenerate: false,
            units: BTreeMap::new(),
        }
    }
}

/// One observed unit's term in Z's information: (h²/D, h(ȳ − m)/D), with
/// h = s√ρ and D = s²(1−ρ) + E; `None` when D = 0.
fn contribution(r: Rating, rho: f64, (y, e): (f64, f64)) -> Option<(f64, f64)> {
    let h = r.sd * rho.sqrt();
    let d = r.sd * r.sd * (1.0 - rho) + e;
    (d > 0.0).then(|| (h * h / d, h * (y - r.mean) / d))
}

/// A unit's belief given its summary and Z's posterior (docs/model.md,
/// "Observations", step 3).
fn unit_belief(r: Rating, rho: f64, (y, e): (f64, f64), zm: f64, z_sd: f64) -> Belief {
    let h = r.sd * rho.sqrt();
    let own_var = r.sd * r.sd * (1.0 - rho);
    let d = own_var + e;
    // c: weight of the reading on the own part; 1 − c = E/D.
    let (c, rest) = if d > 0.0 {
        (own_var / d, e / d)
    } else {
        (0.0, 1.0)
    };
    Belief {
        mean: r.mean + c * (y - r.mean) + h * rest * zm,
        load: h * rest * z_sd,
        own: (r.sd * (1.0 - rho).sqrt()) * rest.sqrt(),
    }
}

/// Z's posterior from the information sums (unless degenerate), then every
/// observed unit's belief.
fn finish(cell: &mut Cell, units: &[super::Unit], rho: f64, k: TraitIdx) {
    if !cell.degenerate {
        let p = 1.0 + cell.prec;
        cell.z_mean = cell.info / p;
        cell.z_sd = (1.0 / p).sqrt();
    }
    for (&u, uc) in cell.units.iter_mut() {
        if let Some(sy) = uc.sum.get() {
            uc.belief = unit_belief(units[u].ratings[k], rho, sy, cell.z_mean, cell.z_sd);
        }
    }
}

/// The readings of an incident and the posterior they give.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Observations {
    readings: Vec<Reading>,
    cells: BTreeMap<(TypeIdx, TraitIdx), Cell>,
}

impl Observations {
    /// Every reading, in log order.
    pub fn readings(&self) -> &[Reading] {
        &self.readings
    }
    pub fn is_empty(&self) -> bool {
        self.readings.is_empty()
    }
    /// The latest reading of unit `u` in trait `k` with this value (and this
    /// sd, when given): the one an `observation_withdrawn` record names.
    pub fn latest_matching(
        &self,
        u: UnitIdx,
        k: TraitIdx,
        value: f64,
        sd: Option<f64>,
    ) -> Option<Reading> {
        self.readings
            .iter()
            .rev()
            .find(|r| {
                r.unit == u && r.trait_idx == k && r.value == value && sd.is_none_or(|s| r.sd == s)
            })
            .copied()
    }
    /// Number of readings of unit `u` in trait `k`.
    pub fn count(&self, u: UnitIdx, k: TraitIdx) -> usize {
        self.readings
            .iter()
            .filter(|r| r.unit == u && r.trait_idx == k)
            .count()
    }
    /// Whether readings have moved the (type, trait) posterior.
    pub fn touches(&self, t: TypeIdx, k: TraitIdx) -> bool {
        self.cells.contains_key(&(t, k))
    }
    /// Whether readings have moved any trait of type `t`.
    pub fn touches_type(&self, t: TypeIdx) -> bool {
        self.cells.keys().any(|&(ct, _)| ct == t)
    }
    /// The posterior of unit `u` (type `t`, rating `r`, type correlation
    /// `rho`) in trait `k`, or `None` when no reading touches (t, k) and the
    /// rating stands as it is.
    #[inline]
    pub fn posterior(
        &self,
        t: TypeIdx,
        k: TraitIdx,
        u: UnitIdx,
        r: Rating,
        rho: f64,
    ) -> Option<Belief> {
        if self.cells.is_empty() {
            return None;
        }
        let cell = self.cells.get(&(t, k))?;
        if let Some(uc) = cell.units.get(&u) {
            return Some(uc.belief);
        }
        // Unobserved type-mate: informed only through Z.
        let h = r.sd * rho.sqrt();
        Some(Belief {
            mean: r.mean + h * cell.z_mean,
            load: h * cell.z_sd,
            own: r.sd * (1.0 - rho).sqrt(),
        })
    }
    /// Posterior mean and sd of the standardised shared factor of (t, k),
    /// if readings touch it.
    pub fn shared_factor(&self, t: TypeIdx, k: TraitIdx) -> Option<(f64, f64)> {
        self.cells.get(&(t, k)).map(|c| (c.z_mean, c.z_sd))
    }
}

/// The posterior of (t, k) from every reading of it (docs/model.md,
/// "Observations"): Z from the observed units' summaries
/// ȳ_i = m_i + h_i·Z + (own part + noise), h_i = s_i√ρ, residual variance
/// D_i = s_i²(1−ρ) + E_i (the multivariate normal conditional; in
/// information form, or one scalar step at a time when some D_i = 0); then
/// each unit's own part given Z by the conjugate normal update (Gelman et
/// al., BDA 3rd ed. §2.5) with weight c_i = s_i²(1−ρ)/D_i.
fn cell(inc: &Incident, t: TypeIdx, k: TraitIdx) -> Option<Cell> {
    let rho = inc.unit_types[t].rho;
    let mut c = Cell::empty();
    for r in &inc.observations.readings {
        if r.trait_idx == k
            && inc.units[r.unit].type_idx == t
            && inc.units[r.unit].ratings[k].sd > 0.0
        {
            c.units.entry(r.unit).or_default().sum.add(r);
        }
    }
    if c.units.is_empty() {
        return None;
    }
    for (&u, uc) in &c.units {
        let Some(sy) = uc.sum.get() else { continue };
        match contribution(inc.units[u].ratings[k], rho, sy) {
            Some((p, b)) => {
                c.prec += p;
                c.info += b;
            }
            None => c.degenerate = true,
        }
    }
    if c.degenerate {
        // Sequential scalar conditioning copes with D = 0.
        let (mut zm, mut zv) = (0.0_f64, 1.0_f64);
        for (&u, uc) in &c.units {
            let Some((y, e)) = uc.sum.get() else { continue };
            let r = inc.units[u].ratings[k];
            let h = r.sd * rho.sqrt();
            let d = r.sd * r.sd * (1.0 - rho) + e;
            let s = h * h * zv + d;
            if s > 0.0 {
                let gain = zv * h / s;
                zm += gain * (y - r.mean - h * zm);
                zv = zv * d / s;
            }
        }
        c.z_mean = zm;
        c.z_sd = zv.max(0.0).sqrt();
    }
    finish(&mut c, &inc.units, rho, k);
    Some(c)
}

impl Incident {
    /// The current belief about unit `u`'s capability in trait `k`: the
    /// posterior given the readings, or the rating when none touch it.
    #[inline]
    pub fn belief(&self, u: UnitIdx, k: TraitIdx) -> Belief {
        let unit = &self.units[u];
        let r = unit.ratings[k];
        let rho = self.unit_types[unit.type_idx].rho;
        self.observations
            .posterior(unit.type_idx, k, u, r, rho)
            .unwrap_or_else(|| Belief::prior(r, rho))
    }

    /// The belief about a new unit of type `t` at the type's rating in
    /// trait `k` (a requested unit): informed only through the shared
    /// factor, as an unobserved type-mate is.
    pub fn type_belief(&self, t: TypeIdx, k: TraitIdx) -> Belief {
        let r = self.unit_types[t].ratings[k];
        let rho = self.unit_types[t].rho;
        let prior = Belief::prior(r, rho);
        match self.observations.shared_factor(t, k) {
            Some((zm, zs)) => Belief {
                mean: r.mean + prior.load * zm,
                load: prior.load * zs,
                own: prior.own,
            },
            None => prior,
        }
    }

    /// Adds a reading and updates its (type, trait) posterior: in O(units
    /// read of that type) through the information sums, in full only when
    /// the cell is degenerate (ρ = 1 and an exact reading).
    pub fn add_reading(&mut self, reading: Reading) {
        self.observations.readings.push(reading);
        let (u, k) = (reading.unit, reading.trait_idx);
        let t = self.units[u].type_idx;
        let r = self.units[u].ratings[k];
        let rho = self.unit_types[t].rho;
        if r.sd <= 0.0 {
            return; // a certain value: the reading cannot move it
        }
        let Incident {
            units,
            observations,
            ..
        } = self;
        let cell = observations.cells.entry((t, k)).or_insert_with(Cell::empty);
        let mut full = cell.degenerate;
        if !full {
            let uc = cell.units.entry(u).or_default();
            if let Some((p, b)) = uc.sum.get().and_then(|sy| contribution(r, rho, sy)) {
                cell.prec -= p;
                cell.info -= b;
            }
            uc.sum.add(&reading);
            match uc.sum.get().and_then(|sy| contribution(r, rho, sy)) {
                Some((p, b)) => {
                    cell.prec += p;
                    cell.info += b;
                    finish(cell, units, rho, k);
                }
                None => full = true,
            }
        }
        if full {
            self.refresh_cell(t, k);
        }
    }

    /// Takes back the last reading equal to `reading`; false if none.
    pub fn withdraw_reading(&mut self, reading: &Reading) -> bool {
        let Some(i) = self
            .observations
            .readings
            .iter()
            .rposition(|r| r == reading)
        else {
            return false;
        };
        self.observations.readings.remove(i);
        self.refresh_cell(self.units[reading.unit].type_idx, reading.trait_idx);
        true
    }

    /// Recomputes every posterior (after a re-rating, or a unit taking back
    /// a slot that has readings).
    pub fn refresh_beliefs(&mut self) {
        if self.observations.readings.is_empty() {
            self.observations.cells.clear();
            return;
        }
        let keys: std::collections::BTreeSet<(TypeIdx, TraitIdx)> = self
            .observations
            .readings
            .iter()
            .map(|r| (self.units[r.unit].type_idx, r.trait_idx))
            .collect();
        self.observations.cells.clear();
        for (t, k) in keys {
            self.refresh_cell(t, k);
        }
    }

    fn refresh_cell(&mut self, t: TypeIdx, k: TraitIdx) {
        match cell(self, t, k) {
            Some(c) => {
                self.observations.cells.insert((t, k), c);
            }
            None => {
                self.observations.cells.remove(&(t, k));
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::parse_incident_str;

    fn incident(rho: f64) -> Incident {
        parse_incident_str(
            &format!(
                "
incident: {{ name: Invented belief test }}
traits: [ {{ id: water }} ]
unit_types: [ {{ id: engine, rho: {rho}, traits: {{ water: {{ mean: 1900, sd: 250 }} }} }} ]
units: [ {{ id: E1, type: engine }}, {{ id: E2, type: engine }} ]
tasks: []
"
            ),
            "t.yaml",
        )
        .expect("loads")
    }

    fn reading(u: usize, value: f64, sd: f64) -> Reading {
        Reading {
            unit: UnitIdx::new(u),
            trait_idx: 0,
            value,
            sd,
        }
    }

    /// Gelman et al., BDA 3rd ed. §2.5 (eqs. 2.11–2.12), by hand:
    /// prior N(1900, 250²), one reading 1650 with sd 100:
    /// precision 1/250² + 1/100² = 1.16e−4, sd = 92.847669…;
    /// mean (1900/62500 + 1650/10000)/1.16e−4 = 1684.482758…
    #[test]
    fn independent_units_follow_the_conjugate_update() {
        let mut inc = incident(0.0);
        inc.add_reading(reading(0, 1650.0, 100.0));
        let b = inc.belief(UnitIdx::new(0), 0);
        assert!((b.mean - 1_684.482_758_620_69).abs() < 1e-9, "{b:?}");
        assert!((b.sd() - 92.847_669_088_525_9).abs() < 1e-9, "{b:?}");
        assert_eq!(b.load, 0.0);
        // The type-mate does not move when ρ = 0.
        assert_eq!(
            inc.belief(UnitIdx::new(1), 0),
            Belief::prior(inc.units[1].ratings[0], 0.0)
        );
        // Two readings 1650 and 1700, sd 100 each: by hand the same update
        // with ȳ = 1675, noise variance 5000: precision 2.16e−4,
        // mean (0.0304 + 0.335)/2.16e−4 = 1691.666…, sd = 68.041381…
        inc.add_reading(reading(0, 1700.0, 100.0));
        let b = inc.belief(UnitIdx::new(0), 0);
        assert!((b.mean - 1_691.666_666_666_67).abs() < 1e-9, "{b:?}");
        assert!((b.sd() - 68.041_381_743_977_2).abs() < 1e-9, "{b:?}");
        assert_eq!(inc.observations.count(UnitIdx::new(0), 0), 2);
        // Withdrawing restores the posterior of the one reading.
        assert!(inc.withdraw_reading(&reading(0, 1700.0, 100.0)));
        let b = inc.belief(UnitIdx::new(0), 0);
        assert!((b.mean - 1_684.482_758_620_69).abs() < 1e-9, "{b:?}");
        assert!(!inc.withdraw_reading(&reading(0, 1700.0, 100.0)));
    }

    /// ρ = 1: units of the type move as one, so a reading of E1 moves E2
    /// exactly as much (the same conjugate update on the shared factor).
    #[test]
    fn full_correlation_moves_type_mates_alike() {
        let mut inc = incident(1.0);
        inc.add_reading(reading(0, 1650.0, 100.0));
        let a = inc.belief(UnitIdx::new(0), 0);
        let b = inc.belief(UnitIdx::new(1), 0);
        assert!((a.mean - 1_684.482_758_620_69).abs() < 1e-9, "{a:?}");
        assert!((b.mean - a.mean).abs() < 1e-9 && (b.sd() - a.sd()).abs() < 1e-9);
        assert_eq!(a.own, 0.0);
    }

    /// An exact reading (sd 0) with ρ < 1 fixes the unit's value.
    #[test]
    fn an_exact_reading_fixes_the_value() {
        let mut inc = incident(0.3);
        inc.add_reading(reading(0, 1700.0, 0.0));
        let a = inc.belief(UnitIdx::new(0), 0);
        assert!((a.mean - 1700.0).abs() < 1e-9 && a.sd() < 1e-9, "{a:?}");
    }
}
