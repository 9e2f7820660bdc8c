//! Ratings from many incidents (`oddsboard ratings LOG…`): per unit type and
//! trait, REML estimates of the nested random-effects model
//! `y = μ + a_incident + b_unit + e` (a, b, e independent normals; a unit is
//! nested in its incident), read from the `observed` events of many logs.
//! Then `sd² = var(a) + var(b)`, `ρ = var(a)/sd²` (SPEC §2's shared share)
//! and the measurement sd is `√var(e)`. The readings' own `sd` fields are not
//! used: the measurement sd is estimated.
//!
//! REML (Patterson and Thompson, Biometrika 58, 1971): maximise
//! `−½[Σ_i ln|V_i| + ln(Σ_i 1ᵀV_i⁻¹1) + Σ_i r_iᵀV_i⁻¹r_i]`, r = y − μ̂ (GLS),
//! V_i the covariance of incident i's readings. Its structure (compound
//! symmetry per unit, plus a rank-one incident term) gives every term in
//! closed form by the Sherman–Morrison formula, so one evaluation costs
//! O(units) from per-unit sums, whatever the number of readings. Maximised
//! by Nelder–Mead over the log variances; intervals from the observed
//! information (numerical Hessian, inverted with nalgebra), Wald on the log
//! scale with the delta method for sd and ρ.

use crate::log::{Event, Record, Replay};
use serde::Serialize;
use std::collections::BTreeMap;

/// Per-unit sums of readings: count, Σy, Σy².
#[derive(Debug, Clone, Copy, Default, PartialEq)]
struct UnitSums {
    n: f64,
    s1: f64,
    s2: f64,
}

/// Readings of one (unit type, trait), grouped by incident and unit.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Group {
    /// incident key → unit key → sums.
    incidents: BTreeMap<String, BTreeMap<String, UnitSums>>,
}

impl Group {
    pub fn add(&mut self, incident: &str, unit: &str, y: f64) {
        let s = self
            .incidents
            .entry(incident.to_string())
            .or_default()
            .entry(unit.to_string())
            .or_default();
        s.n += 1.0;
        s.s1 += y;
        s.s2 += y * y;
    }
    fn counts(&self) -> (usize, usize, usize) {
        let units = self.incidents.values().map(BTreeMap::len).sum();
        let obs = self
            .incidents
            .values()
            .flat_map(|u| u.values())
            .map(|s| s.n as usize)
            .sum();
        (obs, units, self.incidents.len())
    }
}

/// Readings of many logs, by (unit type, trait).
#[derive(Debug, Clone, Default, PartialEq)]
pub struct RatingsData {
    pub groups: BTreeMap<(String, String), Group>,
}

impl RatingsData {
    /// Adds the `observed` events of one log (its records, snapshot first);
    /// `incident` keys it (the log's name). A withdrawn reading is taken
    /// back.
    pub fn add_log(
        &mut self,
        incident: &str,
        records: &[Record],
    ) -> Result<(), crate::log::LogError> {
        let Some((first, rest)) = records.split_first() else {
            return Ok(());
        };
        let mut replay = Replay::start(first)?;
        let mut kept: Vec<(String, String, String, f64)> = Vec::new();
        for r in rest {
            match &r.event {
                Event::Observed {
                    unit,
                    trait_id,
                    value,
                    ..
                } => {
                    if let Some(u) = replay.state.unit_idx(unit) {
                        let ty = &replay.state.unit_types[replay.state.units[u].type_idx].id;
                        kept.push((ty.clone(), trait_id.clone(), unit.clone(), *value));
                    }
                }
                Event::ObservationWithdrawn {
                    unit,
                    trait_id,
                    value,
                    ..
                } => {
                    if let Some(i) = kept
                        .iter()
                        .rposition(|k| &k.2 == unit && &k.1 == trait_id && k.3 == *value)
                    {
                        kept.remove(i);
                    }
                }
                _ => {}
            }
            replay.step(r)?;
        }
        for (ty, tr, unit, y) in kept {
            self.groups
                .entry((ty, tr))
                .or_default()
                .add(incident, &unit, y);
        }
        Ok(())
    }
}

/// An estimate with its 95 % interval.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Estimate {
    pub value: f64,
    pub low: f64,
    pub high: f64,
}

/// The estimates of one (unit type, trait): the `--json` entry.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Rating {
    pub unit_type: String,
    #[serde(rename = "trait")]
    pub trait_id: String,
    pub mean: f64,
    pub sd: f64,
    pub rho: f64,
    pub measurement_sd: f64,
    pub observations: usize,
    pub units: usize,
    pub incidents: usize,
    /// 95 % intervals of mean, sd, rho and measurement sd.
    pub intervals: Intervals,
    /// Why these figures should not be trusted yet (empty when none).
    pub warnings: Vec<String>,
}

#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Intervals {
    pub mean: Estimate,
    pub sd: Estimate,
    pub rho: Estimate,
    pub measurement_sd: Estimate,
}

/// −2 × REML log-likelihood (without the constant) at log variances θ =
/// (ln var(a), ln var(b), ln var(e)), and μ̂ with Σ 1ᵀV⁻¹1.
fn neg2_reml(g: &Group, th: [f64; 3]) -> (f64, f64, f64) {
    let (va, vb, ve) = (th[0].exp(), th[1].exp(), th[2].exp());
    let (mut logdet, mut ss, mut st, mut sq) = (0.0, 0.0, 0.0, 0.0);
    for units in g.incidents.values() {
        // Per unit block W_j = ve·I + vb·J (Sherman–Morrison):
        // 1ᵀW⁻¹1 = n/d, 1ᵀW⁻¹y = Σy/d, yᵀW⁻¹y = (Σy² − vb·(Σy)²/d)/ve,
        // ln|W_j| = (n − 1)·ln ve + ln d, with d = ve + n·vb.
        let (mut a, mut b, mut c) = (0.0, 0.0, 0.0);
        for s in units.values() {
            let d = ve + s.n * vb;
            a += s.n / d;
            b += s.s1 / d;
            c += (s.s2 - vb / d * s.s1 * s.s1) / ve;
            logdet += (s.n - 1.0) * ve.ln() + d.ln();
        }
        // Incident term va·11ᵀ by Sherman–Morrison.
        let k = va / (1.0 + va * a);
        logdet += (1.0 + va * a).ln();
        ss += a - k * a * a;
        st += b - k * a * b;
        sq += c - k * b * b;
    }
    let mu = st / ss;
    (logdet + ss.ln() + sq - st * st / ss, mu, ss)
}

/// Nelder–Mead minimisation (Nelder and Mead, Comput. J. 7, 1965) with the
/// usual coefficients (1, 2, ½, ½).
fn nelder_mead(f: &dyn Fn([f64; 3]) -> f64, start: [f64; 3], step: f64) -> [f64; 3] {
    let mut pts: Vec<([f64; 3], f64)> = (0..4)
        .map(|i| {
            let mut p = start;
            if i > 0 {
                p[i - 1] += step;
            }
            (p, f(p))
        })
        .collect();
    for _ in 0..2000 {
        pts.sort_by(|a, b| a.1.total_cmp(&b.1));
        if (pts[3].1 - pts[0].1).abs() < 1e-12 * (1.0 + pts[0].1.abs()) {
            break;
        }
        let mut c = [0.0; 3];
        for p in &pts[..3] {
            for (cd, pd) in c.iter_mut().zip(&p.0) {
                *cd += pd / 3.0;
            }
        }
        let at = |t: f64| {
            let mut x = [0.0; 3];
            for d in 0..3 {
                x[d] = c[d] + t * (pts[3].0[d] - c[d]);
            }
            x
        };
        let xr = at(-1.0);
        let fr = f(xr);
        if fr < pts[0].1 {
            let xe = at(-2.0);
            let fe = f(xe);
            pts[3] = if fe < fr { (xe, fe) } else { (xr, fr) };
        } else if fr < pts[2].1 {
            pts[3] = (xr, fr);
        } else {
            let xc = at(0.5);
            let fc = f(xc);
            if fc < pts[3].1 {
                pts[3] = (xc, fc);
            } else {
                let best = pts[0].0;
                for p in pts.iter_mut().skip(1) {
                    for (x, b) in p.0.iter_mut().zip(best) {
                        *x = b + 0.5 * (*x - b);
                    }
                    p.1 = f(p.0);
                }
            }
        }
    }
    pts.sort_by(|a, b| a.1.total_cmp(&b.1));
    pts[0].0
}

const Z95: f64 = 1.959_964;

/// Fewer incidents than this: ρ rests on too few shared draws to trust.
pub const MIN_INCIDENTS: usize = 10;

/// REML estimates of one group; `None` with fewer than 3 readings.
pub fn estimate(unit_type: &str, trait_id: &str, g: &Group) -> Option<Rating> {
    let (obs, units, incidents) = g.counts();
    if obs < 3 {
        return None;
    }
    // Standardise for the optimiser; variances scale back by sd².
    let (n, s1, s2) = g
        .incidents
        .values()
        .flat_map(|u| u.values())
        .fold((0.0, 0.0, 0.0), |a, s| (a.0 + s.n, a.1 + s.s1, a.2 + s.s2));
    let centre = s1 / n;
    let scale = ((s2 / n - centre * centre).max(0.0))
        .sqrt()
        .max(1e-9 * (1.0 + centre.abs()));
    let mut z = Group::default();
    for (inc, us) in &g.incidents {
        let m = z.incidents.entry(inc.clone()).or_default();
        for (u, s) in us {
            let s1 = (s.s1 - s.n * centre) / scale;
            let s2 = (s.s2 - 2.0 * centre * s.s1 + s.n * centre * centre) / (scale * scale);
            m.insert(u.clone(), UnitSums { n: s.n, s1, s2 });
        }
    }
    // Far below 1 (the standardised total), a variance is taken as 0.
    let floor = (1e-8_f64).ln();
    let f = |t: [f64; 3]| {
        let t = [t[0].max(floor), t[1].max(floor), t[2].max(floor)];
        neg2_reml(&z, t).0
    };
    let third = (1.0_f64 / 3.0).ln();
    let mut th = nelder_mead(&f, [third, third, third], 1.0);
    th = nelder_mead(&f, th, 0.1);
    for t in th.iter_mut() {
        *t = t.max(floor);
    }
    let (_, mu_z, ss) = neg2_reml(&z, th);
    let (va, vb, ve) = (th[0].exp(), th[1].exp(), th[2].exp());
    // Observed information of ln L = −½·neg2 over θ, by central differences.
    let h = 1e-3;
    let mut hess = nalgebra::Matrix3::<f64>::zeros();
    for i in 0..3 {
        for j in 0..3 {
            let e = |di: f64, dj: f64| {
                let mut t = th;
                t[i] += di;
                t[j] += dj;
                0.5 * neg2_reml(&z, t).0
            };
            hess[(i, j)] = (e(h, h) - e(h, -h) - e(-h, h) + e(-h, -h)) / (4.0 * h * h);
        }
    }
    let cov = hess
        .try_inverse()
        .filter(|c| (0..3).all(|i| c[(i, i)] > 0.0));
    let var_of = |g: [f64; 3]| -> f64 {
        cov.map_or(f64::INFINITY, |c| {
            let v = nalgebra::Vector3::from(g);
            (v.transpose() * c * v)[(0, 0)]
        })
    };
    let tot = va + vb;
    let sd_z = tot.sqrt();
    let rho = va / tot;
    // ln sd: gradient ½(va, vb, 0)/tot; ρ: va·vb/tot²·(1, −1, 0).
    let se_lnsd = var_of([0.5 * va / tot, 0.5 * vb / tot, 0.0]).sqrt();
    let se_rho = var_of([va * vb / (tot * tot), -va * vb / (tot * tot), 0.0]).sqrt();
    let se_lnme = var_of([0.0, 0.0, 0.5]).sqrt();
    let se_mu = 1.0 / ss.sqrt();
    let mean = centre + scale * mu_z;
    let sd = scale * sd_z;
    let me = scale * ve.sqrt();
    let wald_log = |v: f64, se: f64| Estimate {
        value: v,
        low: v * (-Z95 * se).exp(),
        high: if se.is_finite() {
            v * (Z95 * se).exp()
        } else {
            f64::INFINITY
        },
    };
    let mut warnings = Vec::new();
    if incidents < 2 {
        warnings.push(
            "one incident: ρ cannot be estimated (the incident's shared part is the mean itself); treat ρ as unknown".into(),
        );
    } else if incidents < MIN_INCIDENTS {
        warnings.push(format!(
            "only {incidents} incidents: the shared share ρ is poorly told from a unit's own spread; read its interval"
        ));
    }
    if units < 10 {
        warnings.push(format!(
            "only {units} units: the spread between units is rough"
        ));
    }
    if obs < 30 {
        warnings.push(format!("only {obs} readings"));
    }
    if cov.is_none() {
        warnings.push(
            "the estimate sits on a boundary (a variance near 0): intervals not available".into(),
        );
    }
    Some(Rating {
        unit_type: unit_type.to_string(),
        trait_id: trait_id.to_string(),
        mean,
        sd,
        rho,
        measurement_sd: me,
        observations: obs,
        units,
        incidents,
        intervals: Intervals {
            mean: Estimate {
                value: mean,
                low: mean - Z95 * scale * se_mu,
                high: mean + Z95 * scale * se_mu,
            },
            sd: wald_log(sd, se_lnsd),
            rho: Estimate {
                value: rho,
                low: (rho - Z95 * se_rho).clamp(0.0, 1.0),
                high: (rho + Z95 * se_rho).clamp(0.0, 1.0),
            },
            measurement_sd: wald_log(me, se_lnme),
        },
        warnings,
    })
}

/// Estimates of every (unit type, trait) with readings.
pub fn ratings(data: &RatingsData) -> Vec<Rating> {
    data.groups
        .iter()
        .filter_map(|((t, k), g)| estimate(t, k, g))
        .collect()
}
