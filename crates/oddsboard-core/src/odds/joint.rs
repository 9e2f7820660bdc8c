//! Joint odds: the probability that every task of a set (a tier, or all open
//! tasks) succeeds at once, under the model of SPEC §2.
//!
//! Why it is not the product of the task odds: unit i of type t delivers
//! `mean + sd·(√ρ_t·Z_tk + √(1 − ρ_t)·Z_ik)` in trait k, and the shared
//! factor `Z_tk` is the same on every task (the same weather reaches all of
//! them). Given the shared factors, every (task, trait) shortfall is an
//! independent normal, so
//!
//! ```text
//! P(all) = Π_k E[ Π_j Φ((m_jk + Σ_t a_tjk·Z_tk) / s_jk) ]
//! ```
//!
//! with `m_jk = mean_jk − need_jk`, loading `a_tjk = √ρ_t·Σ_{i∈t on j} sd_ik`
//! (a factor scales with the type's total sd on each task) and conditional
//! variance `s_jk² = var_jk − Σ_t a_tjk²` (need sd, the units' own parts and
//! the factors of types that serve only one task of the set stay in it).
//! Traits are independent, so the expectation splits by trait, and within a
//! trait by groups of tasks linked through a shared factor.
//!
//! Each group is an expectation over d standard normal factors:
//! * d = 0: the product, exactly (the same ln Φ values the task odds use);
//! * d = 1 or 2: adaptive Gauss–Kronrod (7/15 point, the QUADPACK pair)
//!   over the factor, nested for d = 2, centred on the integrand's mode and
//!   split where a near-deterministic task switches; the integrand is
//!   log-concave (ln Φ is concave), so it has one mode;
//! * d ≥ 3: randomized quasi-Monte Carlo (a Richtmyer lattice, 8 seeded
//!   random shifts, Box–Muller to normals), shifted to the integrand's mode
//!   (importance sampling), with the standard error from the spread of the
//!   shifts.
//!
//! Every sum is kept in ln space, so joint odds of 1e−40 still come out.
//!
//! Invariant: pure and repeatable (the lattice shifts are seeded from
//! [`JointOptions::seed`]); no I/O, no clock.

use super::normal::ln_phi;
use super::trait_ln_odds;
use crate::model::{Incident, Need, Placement, TaskIdx, Tier, UnitIdx};
use rand::rngs::StdRng;
use rand::{RngExt, SeedableRng};
use serde::Serialize;

/// How a joint figure was computed.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
pub enum JointMethod {
    /// No shared factor (or a task certain to fail): the product, exact.
    Product,
    /// One or two shared factors per group: adaptive Gauss–Kronrod.
    Quadrature,
    /// Three or more: randomized quasi-Monte Carlo.
    QuasiMonteCarlo,
}

impl JointMethod {
    pub fn as_str(self) -> &'static str {
        match self {
            JointMethod::Product => "product",
            JointMethod::Quadrature => "quadrature",
            JointMethod::QuasiMonteCarlo => "quasi_monte_carlo",
        }
    }
}

/// Settings of the joint computation.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct JointOptions {
    /// Seed of the lattice's random shifts (used only for 3 or more shared
    /// factors in one group). Default 0.
    pub seed: u64,
    /// Most lattice points per shift (the quasi-Monte Carlo path doubles
    /// from 256 until its standard error is small enough or this is
    /// reached). Default 32 768; the dashboard uses fewer to stay quick.
    pub max_points: usize,
}

impl Default for JointOptions {
    fn default() -> Self {
        JointOptions {
            seed: 0,
            max_points: 1 << 15,
        }
    }
}

impl JointOptions {
    /// Settings for a screen redrawn on every change: at most 2 048 points
    /// per shift (the error estimate says what that costs in accuracy).
    pub fn quick() -> Self {
        JointOptions {
            max_points: 1 << 11,
            ..JointOptions::default()
        }
    }
}

/// The probability that every task of a set succeeds.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct JointOdds {
    /// ln of the joint odds (−∞ when exactly 0).
    pub ln_odds: f64,
    /// Estimated absolute error of [`JointOdds::odds`]: the Gauss–Kronrod
    /// difference for quadrature, three standard errors for quasi-Monte
    /// Carlo, 0 for the exact product.
    pub error: f64,
    /// The most demanding method any group needed.
    pub method: JointMethod,
    /// Number of tasks in the set.
    pub tasks: usize,
    /// Number of (type, trait) factors shared by two or more of the tasks.
    pub shared_factors: usize,
    /// ln of the product of the task odds (what the joint odds would be if
    /// the tasks were independent), for comparison.
    pub ln_product: f64,
}

impl JointOdds {
    pub fn odds(&self) -> f64 {
        self.ln_odds.exp()
    }
    pub fn product(&self) -> f64 {
        self.ln_product.exp()
    }
    fn certain(tasks: usize) -> Self {
        JointOdds {
            ln_odds: 0.0,
            error: 0.0,
            method: JointMethod::Product,
            tasks,
            shared_factors: 0,
            ln_product: 0.0,
        }
    }
}

/// Joint odds of the whole set and of each tier that has tasks in it.
#[derive(Debug, Clone, PartialEq)]
pub struct JointByTier {
    pub all: JointOdds,
    /// Tiers with at least one open task, highest first.
    pub tiers: Vec<(Tier, JointOdds)>,
}

/// Joint odds of every open task and of each tier's open tasks.
pub fn joint_by_tier(
    incident: &Incident,
    placement: &Placement,
    options: JointOptions,
) -> JointByTier {
    let open: Vec<TaskIdx> = crate::model::TaskIdx::range(incident.tasks.len())
        .filter(|&t| incident.tasks[t].is_open())
        .collect();
    let all = joint_odds(incident, placement, &open, options);
    let tiers = Tier::ALL
        .iter()
        .filter_map(|&tier| {
            let set: Vec<TaskIdx> = open
                .iter()
                .copied()
                .filter(|&t| incident.tasks[t].tier == tier)
                .collect();
            (!set.is_empty()).then(|| (tier, joint_odds(incident, placement, &set, options)))
        })
        .collect();
    JointByTier { all, tiers }
}

/// `"joint_odds"` of `odds --json` and `plan --json`: the joint odds of all
/// open tasks and of each tier that has open tasks (others left out).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct JointOddsView {
    pub all: f64,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub life: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub stabilization: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub property: Option<f64>,
}

/// How one joint figure was reached, for `"joint_detail"`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct JointDetailView {
    /// `all` or the tier's name.
    pub set: &'static str,
    pub odds: f64,
    /// `null` when the joint odds are exactly 0.
    pub ln_odds: Option<f64>,
    /// Estimated absolute error of `odds`.
    pub error: f64,
    /// `product`, `quadrature` or `quasi_monte_carlo`.
    pub method: &'static str,
    pub tasks: usize,
    /// (type, trait) factors shared by two or more tasks of the set.
    pub shared_factors: usize,
    /// Product of the task odds (right only for independent tasks).
    pub product: f64,
}

fn detail(set: &'static str, j: &JointOdds) -> JointDetailView {
    JointDetailView {
        set,
        odds: j.odds(),
        ln_odds: j.ln_odds.is_finite().then_some(j.ln_odds),
        error: j.error,
        method: j.method.as_str(),
        tasks: j.tasks,
        shared_factors: j.shared_factors,
        product: j.product(),
    }
}

impl JointByTier {
    /// The joint odds of one tier, if it has open tasks.
    pub fn tier(&self, tier: Tier) -> Option<&JointOdds> {
        self.tiers.iter().find(|(t, _)| *t == tier).map(|(_, j)| j)
    }
    /// The `joint_odds` JSON member.
    pub fn view(&self) -> JointOddsView {
        let get = |t| self.tier(t).map(JointOdds::odds);
        JointOddsView {
            all: self.all.odds(),
            life: get(Tier::Life),
            stabilization: get(Tier::Stabilization),
            property: get(Tier::Property),
        }
    }
    /// Per set (tiers first, then all): value, method, error, product.
    pub fn details(&self) -> Vec<JointDetailView> {
        let mut out: Vec<JointDetailView> = self
            .tiers
            .iter()
            .map(|(t, j)| detail(t.as_str(), j))
            .collect();
        out.push(detail("all", &self.all));
        out
    }
}

/// One (task, trait) of a group: succeeds when `m + Σ a·Z > s·ε`.
#[derive(Debug, Clone)]
struct Row {
    m: f64,
    /// Conditional sd given the group's factors (may be 0).
    s: f64,
    /// (factor index within the group, loading).
    loads: Vec<(usize, f64)>,
}

/// Joint odds of `tasks` (task indices; duplicates are ignored) under
/// `placement`. Closed tasks count like open ones: callers pass the set
/// they mean.
pub fn joint_odds(
    incident: &Incident,
    placement: &Placement,
    tasks: &[TaskIdx],
    options: JointOptions,
) -> JointOdds {
    let n_traits = incident.traits.len();
    let n_types = incident.unit_types.len();
    let mut set: Vec<TaskIdx> = tasks.to_vec();
    set.sort_unstable();
    set.dedup();
    let n = set.len();
    let mut slot = vec![usize::MAX; incident.tasks.len()];
    for (i, &t) in set.iter().enumerate() {
        slot[t] = i;
    }
    // Per (task, type, trait): Σ sd and Σ sd², in roster order (as the task
    // odds sum them, so the product case matches them to the last bit).
    let at = |i: usize, ty: usize, k: usize| (i * n_types + ty) * n_traits + k;
    let mut s1 = vec![0.0_f64; n * n_types * n_traits];
    let mut s2 = vec![0.0_f64; n * n_types * n_traits];
    let mut mean = vec![0.0_f64; n * n_traits];
    let mut count = vec![0_u32; n];
    for (u, t) in placement.0.iter().enumerate() {
        let Some(t) = *t else { continue };
        let Some(&i) = slot.get(t.index()) else {
            continue;
        };
        if i == usize::MAX {
            continue;
        }
        count[i] += 1;
        let unit = &incident.units[u];
        let rho = incident.unit_types[unit.type_idx].rho;
        for (k, r) in unit.ratings.iter().enumerate() {
            let j = at(i, unit.type_idx, k);
            // Where readings touch (type, trait): Σ load and Σ own² instead.
            let (m, a, b) =
                match incident
                    .observations
                    .posterior(unit.type_idx, k, UnitIdx::new(u), *r, rho)
                {
                    Some(p) => (p.mean, p.load, p.own * p.own),
                    None => (r.mean, r.sd, r.sd * r.sd),
                };
            mean[i * n_traits + k] += m;
            s1[j] += a;
            s2[j] += b;
        }
    }
    let mut out = JointOdds::certain(n);
    // Forced zeros (no units, below the minimum) make the joint exactly 0.
    for (i, &t) in set.iter().enumerate() {
        let task = &incident.tasks[t];
        let has_needs = task.needs.iter().any(Need::counts);
        if (has_needs && count[i] == 0) || task.min_units.is_some_and(|m| count[i] < m) {
            out.ln_odds = f64::NEG_INFINITY;
            out.ln_product = f64::NEG_INFINITY;
            return out;
        }
    }
    let rho: Vec<f64> = incident.unit_types.iter().map(|t| t.rho).collect();
    let mut rel_err = 0.0;
    for k in 0..n_traits {
        // Per type: (own-part weight, shared weight on Σ, loading per Σ).
        // Touched by readings: the sums are Σ own² and Σ load already.
        let w: Vec<(f64, f64, f64)> = rho
            .iter()
            .enumerate()
            .map(|(ty, &r)| {
                if incident.observations.touches(ty, k) {
                    (1.0, 1.0, 1.0)
                } else {
                    (1.0 - r, r, r.sqrt())
                }
            })
            .collect();
        let counting: Vec<usize> = (0..n)
            .filter(|&i| incident.tasks[set[i]].needs[k].counts())
            .collect();
        // Shared (type, trait) factors: ρ > 0 and spread on ≥ 2 tasks.
        let shared: Vec<usize> = (0..n_types)
            .filter(|&ty| {
                w[ty].2 > 0.0
                    && counting
                        .iter()
                        .filter(|&&i| w[ty].2 * s1[at(i, ty, k)] > 0.0)
                        .count()
                        >= 2
            })
            .collect();
        out.shared_factors += shared.len();
        let mut rows: Vec<Row> = Vec::new();
        for &i in &counting {
            let need = incident.tasks[set[i]].needs[k];
            let m = mean[i * n_traits + k];
            let mut var = 0.0;
            for (ty, &(a, b, _)) in w.iter().enumerate() {
                let j = at(i, ty, k);
                var += a * s2[j] + b * s1[j] * s1[j];
            }
            let ln_p = trait_ln_odds(m, var, need);
            out.ln_product += ln_p;
            let loads: Vec<(usize, f64)> = shared
                .iter()
                .enumerate()
                .filter(|&(_, &ty)| s1[at(i, ty, k)] > 0.0)
                .map(|(f, &ty)| (f, w[ty].2 * s1[at(i, ty, k)]))
                .collect();
            if loads.is_empty() {
                out.ln_odds += ln_p;
                continue;
            }
            // Conditional variance, summed directly (no cancellation).
            let mut cvar = need.sd * need.sd;
            for (ty, &(a, b, _)) in w.iter().enumerate() {
                let j = at(i, ty, k);
                cvar += a * s2[j];
                if !shared.contains(&ty) {
                    cvar += b * s1[j] * s1[j];
                }
            }
            rows.push(Row {
                m: m - need.need,
                s: cvar.max(0.0).sqrt(),
                loads,
            });
        }
        for (group, dims) in groups(rows, shared.len()) {
            let (ln_p, err, method) = match dims {
                1 => {
                    let (l, e) = quad_1d(&group);
                    (l, e, JointMethod::Quadrature)
                }
                2 => {
                    let (l, e) = quad_2d(&group);
                    (l, e, JointMethod::Quadrature)
                }
                _ => {
                    let seed = options.seed ^ ((k as u64) << 32);
                    let (l, e) = rqmc(&group, dims, seed, options.max_points);
                    (l, e, JointMethod::QuasiMonteCarlo)
                }
            };
            out.ln_odds += ln_p;
            rel_err += err;
            out.method = out.method.max(method);
        }
    }
    if out.ln_odds > 0.0 {
        out.ln_odds = 0.0;
    }
    out.error = rel_err * out.odds();
    out
}

/// Splits rows into groups linked by shared factors; renumbers each group's
/// factors from 0. Returns (rows, number of factors).
fn groups(rows: Vec<Row>, n_factors: usize) -> Vec<(Vec<Row>, usize)> {
    // Union-find over factors.
    let mut parent: Vec<usize> = (0..n_factors).collect();
    fn find(p: &mut [usize], mut x: usize) -> usize {
        while p[x] != x {
            p[x] = p[p[x]];
            x = p[x];
        }
        x
    }
    for r in &rows {
        let first = find(&mut parent, r.loads[0].0);
        for &(f, _) in &r.loads[1..] {
            let g = find(&mut parent, f);
            parent[g] = first;
        }
    }
    let mut out: Vec<(usize, Vec<Row>, Vec<usize>)> = Vec::new();
    for mut r in rows {
        let root = find(&mut parent, r.loads[0].0);
        let idx = match out.iter().position(|g| g.0 == root) {
            Some(i) => i,
            None => {
                out.push((root, Vec::new(), Vec::new()));
                out.len() - 1
            }
        };
        let factors = &mut out[idx].2;
        for load in r.loads.iter_mut() {
            let local = match factors.iter().position(|&f| f == load.0) {
                Some(p) => p,
                None => {
                    factors.push(load.0);
                    factors.len() - 1
                }
            };
            load.0 = local;
        }
        out[idx].1.push(r);
    }
    out.into_iter().map(|(_, r, f)| (r, f.len())).collect()
}

/// ln φ(z).
fn ln_pdf(z: f64) -> f64 {
    -0.5 * z * z - 0.918_938_533_204_672_8
}

/// Inverse Mills ratio φ(x)/Φ(x), finite for every finite x.
fn mills(x: f64) -> f64 {
    (ln_pdf(x) - ln_phi(x)).exp()
}

/// Factors beyond ±LIMIT carry less than e^(−LIMIT²/2) of the mass.
const LIMIT: f64 = 60.0;

/// The integrand of one factor `z`, other factors fixed into offsets:
/// rows (m, a, s): ln φ(z) + Σ ln Φ((m + a·z)/s), every s > 0.
struct Line {
    rows: Vec<(f64, f64, f64)>,
    /// The factor must lie in [lo, hi] (from rows with s = 0).
    lo: f64,
    hi: f64,
    /// A row with s = 0 and a = 0 that fails: the integral is 0.
    dead: bool,
    /// Where a row switches sharply (width in z below 1).
    breaks: Vec<f64>,
}

impl Line {
    /// `rows` as (m, a, s); s = 0 rows become bounds.
    fn new(input: impl Iterator<Item = (f64, f64, f64)>) -> Line {
        let mut line = Line {
            rows: Vec::new(),
            lo: -LIMIT,
            hi: LIMIT,
            dead: false,
            breaks: Vec::new(),
        };
        for (m, a, s) in input {
            if s > 0.0 {
                if a > 0.0 && s < a {
                    line.breaks.push(-m / a);
                }
                line.rows.push((m, a, s));
            } else if a > 0.0 {
                line.lo = line.lo.max(-m / a);
            } else if m < 0.0 {
                line.dead = true;
            }
        }
        line
    }
    fn h(&self, z: f64) -> f64 {
        ln_pdf(z)
            + self
                .rows
                .iter()
                .map(|&(m, a, s)| ln_phi((m + a * z) / s))
                .sum::<f64>()
    }
    /// h′ and h″ (h is concave, h″ < 0).
    fn dh(&self, z: f64) -> (f64, f64) {
        let (mut d1, mut d2) = (-z, -1.0);
        for &(m, a, s) in &self.rows {
            let x = (m + a * z) / s;
            let l = mills(x);
            let c = a / s;
            d1 += c * l;
            d2 -= c * c * l * (x + l);
        }
        (d1, d2)
    }
    /// The maximum of h on [lo, hi]: safeguarded Newton on h′ = 0.
    fn mode(&self) -> f64 {
        let (mut lo, mut hi) = (self.lo, self.hi);
        let mut z = 0.0_f64.clamp(lo, hi);
        for _ in 0..100 {
            let (d1, d2) = self.dh(z);
            if d1 > 0.0 {
                lo = z;
            } else {
                hi = z;
            }
            let mut next = z - d1 / d2;
            if !(next > lo && next < hi && next.is_finite()) {
                next = 0.5 * (lo + hi);
            }
            if (next - z).abs() < 1e-10 * (1.0 + z.abs()) || hi - lo < 1e-12 {
                return next;
            }
            z = next;
        }
        z
    }
    /// ln ∫ e^h over [lo, hi], and its relative error estimate.
    fn integrate(&self, rel_tol: f64) -> (f64, f64) {
        if self.dead || self.lo >= self.hi {
            return (f64::NEG_INFINITY, 0.0);
        }
        let mode = self.mode();
        integrate_ln(
            &|z| self.h(z),
            self.lo,
            self.hi,
            mode,
            &self.breaks,
            rel_tol,
        )
    }
}

/// Gauss–Kronrod 15-point nodes (abscissae ≥ 0) and weights, with the
/// embedded 7-point Gauss weights (QUADPACK's qk15: Piessens, de
/// Doncker-Kapenga, Überhuber and Kahaner, 1983). Checked by polynomial
/// exactness in the tests.
const XGK: [f64; 8] = [
    0.991_455_371_120_812_6,
    0.949_107_912_342_758_5,
    0.864_864_423_359_769_1,
    0.741_531_185_599_394_4,
    0.586_087_235_467_691_1,
    0.405_845_151_377_397_2,
    0.207_784_955_007_898_5,
    0.0,
];
const WGK: [f64; 8] = [
    0.022_935_322_010_529_22,
    0.063_092_092_629_978_55,
    0.104_790_010_322_250_18,
    0.140_653_259_715_525_92,
    0.169_004_726_639_267_9,
    0.190_350_578_064_785_4,
    0.204_432_940_075_298_9,
    0.209_482_141_084_727_83,
];
/// Gauss weights of the odd Kronrod nodes (XGK[1], XGK[3], XGK[5], XGK[7]).
const WG: [f64; 4] = [
    0.129_484_966_168_869_7,
    0.279_705_391_489_276_7,
    0.381_830_050_505_118_9,
    0.417_959_183_673_469_4,
];

/// Kronrod and Gauss estimates of ∫_a^b f.
fn gk15(f: &dyn Fn(f64) -> f64, a: f64, b: f64) -> (f64, f64) {
    let c = 0.5 * (a + b);
    let h = 0.5 * (b - a);
    let fc = f(c);
    let mut k = WGK[7] * fc;
    let mut g = WG[3] * fc;
    for i in 0..7 {
        let fs = f(c - h * XGK[i]) + f(c + h * XGK[i]);
        k += WGK[i] * fs;
        if i % 2 == 1 {
            g += WG[i / 2] * fs;
        }
    }
    (k * h, g * h)
}

/// ln ∫_lo^hi e^{h(z)} dz for a log-concave h with its maximum at `mode`:
/// the window where h is within 40 of its maximum, split at the mode and
/// at `breaks`, refined where the Gauss–Kronrod difference is largest.
fn integrate_ln(
    h: &dyn Fn(f64) -> f64,
    lo: f64,
    hi: f64,
    mode: f64,
    breaks: &[f64],
    rel_tol: f64,
) -> (f64, f64) {
    let top = h(mode);
    if top == f64::NEG_INFINITY {
        return (f64::NEG_INFINITY, 0.0);
    }
    // Window: step out until the integrand is e^−40 below its peak.
    let edge = |dir: f64, limit: f64| {
        let mut step = 0.25;
        loop {
            let z = mode + dir * step;
            if (z - limit) * dir >= 0.0 {
                return limit;
            }
            if h(z) < top - 40.0 {
                return z;
            }
            step *= 2.0;
        }
    };
    let a = edge(-1.0, lo);
    let b = edge(1.0, hi);
    let mut cuts: Vec<f64> = vec![a, b];
    if mode > a && mode < b {
        cuts.push(mode);
    }
    cuts.extend(breaks.iter().copied().filter(|&x| x > a && x < b));
    cuts.sort_by(f64::total_cmp);
    cuts.dedup();
    let f = |z: f64| (h(z) - top).exp();
    // (a, b, kronrod, |kronrod − gauss|)
    let mut panels: Vec<(f64, f64, f64, f64)> = Vec::new();
    for w in cuts.windows(2) {
        // At most 4 panels per unit of z to start with.
        let pieces = ((w[1] - w[0]) * 0.5).ceil().clamp(1.0, 8.0) as usize;
        let step = (w[1] - w[0]) / pieces as f64;
        for p in 0..pieces {
            let (x0, x1) = (w[0] + step * p as f64, w[0] + step * (p + 1) as f64);
            let (k, g) = gk15(&f, x0, x1);
            panels.push((x0, x1, k, (k - g).abs()));
        }
    }
    for _ in 0..500 {
        let total: f64 = panels.iter().map(|p| p.2).sum();
        let err: f64 = panels.iter().map(|p| p.3).sum();
        if err <= rel_tol * total {
            break;
        }
        let Some((i, _)) = panels
            .iter()
            .enumerate()
            .max_by(|x, y| x.1.3.total_cmp(&y.1.3))
        else {
            break;
        };
        let (x0, x1, _, _) = panels.swap_remove(i);
        let mid = 0.5 * (x0 + x1);
        for (u, v) in [(x0, mid), (mid, x1)] {
            let (k, g) = gk15(&f, u, v);
            panels.push((u, v, k, (k - g).abs()));
        }
    }
    let total: f64 = panels.iter().map(|p| p.2).sum();
    let err: f64 = panels.iter().map(|p| p.3).sum();
    if total <= 0.0 {
        return (f64::NEG_INFINITY, 0.0);
    }
    (top + total.ln(), err / total)
}

/// One shared factor: ∫ φ(z) Π Φ((m + a·z)/s) dz.
fn quad_1d(rows: &[Row]) -> (f64, f64) {
    let line = Line::new(rows.iter().map(|r| (r.m, r.loads[0].1, r.s)));
    line.integrate(1e-11)
}

fn load_of(r: &Row, f: usize) -> f64 {
    r.loads.iter().find(|l| l.0 == f).map_or(0.0, |l| l.1)
}

/// Two shared factors: the outer integral over z₁ of the inner one over z₂.
fn quad_2d(rows: &[Row]) -> (f64, f64) {
    let inner = |z1: f64| -> (f64, f64) {
        let line = Line::new(
            rows.iter()
                .map(|r| (r.m + load_of(r, 0) * z1, load_of(r, 1), r.s)),
        );
        line.integrate(1e-10)
    };
    let h = |z1: f64| ln_pdf(z1) + inner(z1).0;
    // Outer bounds and breaks from rows that do not involve z₂.
    let outer = Line::new(
        rows.iter()
            .filter(|r| load_of(r, 1) == 0.0)
            .map(|r| (r.m, load_of(r, 0), r.s)),
    );
    if outer.dead || outer.lo >= outer.hi {
        return (f64::NEG_INFINITY, 0.0);
    }
    let mode = golden_max(&h, outer.lo, outer.hi);
    let (ln, err) = integrate_ln(&h, outer.lo, outer.hi, mode, &outer.breaks, 1e-9);
    (ln, err + 1e-10)
}

/// Maximum of a unimodal function on [lo, hi] by golden-section search.
fn golden_max(h: &dyn Fn(f64) -> f64, lo: f64, hi: f64) -> f64 {
    const R: f64 = 0.618_033_988_749_894_8;
    // Coarse scan first: on a wide window the peak may be narrow.
    let n = 24;
    let step = (hi - lo) / n as f64;
    let (mut best, mut best_v) = (lo, f64::NEG_INFINITY);
    for i in 0..=n {
        let z = lo + step * i as f64;
        let v = h(z);
        if v > best_v {
            best = z;
            best_v = v;
        }
    }
    let (mut a, mut b) = ((best - step).max(lo), (best + step).min(hi));
    let mut c = b - R * (b - a);
    let mut d = a + R * (b - a);
    let (mut fc, mut fd) = (h(c), h(d));
    while b - a > 1e-4 {
        if fc >= fd {
            b = d;
            d = c;
            fd = fc;
            c = b - R * (b - a);
            fc = h(c);
        } else {
            a = c;
            c = d;
            fc = fd;
            d = a + R * (b - a);
            fd = h(d);
        }
    }
    0.5 * (a + b)
}

/// First primes, for the Richtmyer lattice's generating vector √p mod 1.
const PRIMES: [u32; 32] = [
    2, 3, 5, 7, 11, 13, 17, 19, 23, 29, 31, 37, 41, 43, 47, 53, 59, 61, 67, 71, 73, 79, 83, 89, 97,
    101, 103, 107, 109, 113, 127, 131,
];

/// ln Σ e^{x_i}.
fn ln_sum_exp(xs: &[f64]) -> f64 {
    let top = xs.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    if top == f64::NEG_INFINITY {
        return top;
    }
    top + xs.iter().map(|x| (x - top).exp()).sum::<f64>().ln()
}

/// ln of Π_j Φ(x_j) at factor values `z` (s = 0 rows as indicators).
fn ln_integrand(rows: &[Row], z: &[f64]) -> f64 {
    let mut acc = 0.0;
    for r in rows {
        let x = r.m + r.loads.iter().map(|&(f, a)| a * z[f]).sum::<f64>();
        if r.s > 0.0 {
            acc += ln_phi(x / r.s);
        } else if x < 0.0 {
            return f64::NEG_INFINITY;
        }
    }
    acc
}

/// The mode of ln φ_d(z) + Σ ln Φ(x_j(z)) by damped Newton (concave), rows
/// with s = 0 left out. Returns the shift for importance sampling.
fn mode_nd(rows: &[Row], d: usize) -> Vec<f64> {
    let g = |z: &[f64]| -0.5 * z.iter().map(|v| v * v).sum::<f64>() + ln_integrand_soft(rows, z);
    let mut z = vec![0.0; d];
    let mut gz = g(&z);
    for _ in 0..50 {
        let mut grad: Vec<f64> = z.iter().map(|v| -v).collect();
        // −Hessian, row-major.
        let mut neg_h = vec![0.0; d * d];
        for i in 0..d {
            neg_h[i * d + i] = 1.0;
        }
        for r in rows.iter().filter(|r| r.s > 0.0) {
            let x = (r.m + r.loads.iter().map(|&(f, a)| a * z[f]).sum::<f64>()) / r.s;
            let l = mills(x);
            let w = l * (x + l) / (r.s * r.s);
            for &(f, a) in &r.loads {
                grad[f] += l * a / r.s;
                for &(f2, a2) in &r.loads {
                    neg_h[f * d + f2] += w * a * a2;
                }
            }
        }
        let Some(step) = cholesky_solve(&mut neg_h, &grad, d) else {
            break;
        };
        let mut t = 1.0;
        let mut moved = false;
        for _ in 0..30 {
            let cand: Vec<f64> = z
                .iter()
                .zip(&step)
                .map(|(v, s)| (v + t * s).clamp(-LIMIT, LIMIT))
                .collect();
            let gc = g(&cand);
            if gc >= gz {
                let delta: f64 = cand.iter().zip(&z).map(|(a, b)| (a - b).abs()).sum();
                z = cand;
                gz = gc;
                moved = delta > 1e-9;
                break;
            }
            t *= 0.5;
        }
        if !moved {
            break;
        }
    }
    z
}

/// As [`ln_integrand`] but skipping s = 0 rows (for the mode search).
fn ln_integrand_soft(rows: &[Row], z: &[f64]) -> f64 {
    rows.iter()
        .filter(|r| r.s > 0.0)
        .map(|r| ln_phi((r.m + r.loads.iter().map(|&(f, a)| a * z[f]).sum::<f64>()) / r.s))
        .sum()
}

/// Solves A·x = b for symmetric positive definite A (overwritten).
fn cholesky_solve(a: &mut [f64], b: &[f64], d: usize) -> Option<Vec<f64>> {
    for j in 0..d {
        let mut s = a[j * d + j];
        for k in 0..j {
            s -= a[j * d + k] * a[j * d + k];
        }
        if s.is_nan() || s <= 0.0 || !s.is_finite() {
            return None;
        }
        let l = s.sqrt();
        a[j * d + j] = l;
        for i in j + 1..d {
            let mut s = a[i * d + j];
            for k in 0..j {
                s -= a[i * d + k] * a[j * d + k];
            }
            a[i * d + j] = s / l;
        }
    }
    let mut y = b.to_vec();
    for i in 0..d {
        for k in 0..i {
            y[i] -= a[i * d + k] * y[k];
        }
        y[i] /= a[i * d + i];
    }
    for i in (0..d).rev() {
        for k in i + 1..d {
            y[i] -= a[k * d + i] * y[k];
        }
        y[i] /= a[i * d + i];
    }
    Some(y)
}

/// Number of random shifts of the lattice.
const SHIFTS: usize = 8;

/// d ≥ 3 factors: randomized quasi-Monte Carlo (Richtmyer lattice with
/// random shifts, Box–Muller to normals), importance-shifted to the mode.
/// Returns ln of the estimate and its relative error (three standard
/// errors across the shifts).
fn rqmc(rows: &[Row], d: usize, seed: u64, max_points: usize) -> (f64, f64) {
    let mu = mode_nd(rows, d);
    let mu2: f64 = mu.iter().map(|v| v * v).sum();
    let pairs = d.div_ceil(2);
    let alpha: Vec<f64> = PRIMES
        .iter()
        .cycle()
        .take(2 * pairs)
        .enumerate()
        .map(|(i, &p)| {
            // Past the table, scale to keep the components distinct.
            let x = (p as f64).sqrt() * (1 + i / PRIMES.len()) as f64;
            x.fract()
        })
        .collect();
    let mut rng = StdRng::seed_from_u64(seed);
    let shifts: Vec<Vec<f64>> = (0..SHIFTS)
        .map(|_| (0..2 * pairs).map(|_| rng.random::<f64>()).collect())
        .collect();
    let mut n_points = 256_usize;
    let mut z = vec![0.0; 2 * pairs];
    let mut u = vec![0.0; 2 * pairs];
    let mut w = vec![0.0; d];
    let mut vals = Vec::new();
    loop {
        let mut shift_ln = Vec::with_capacity(SHIFTS);
        for shift in &shifts {
            vals.clear();
            for i in 0..n_points {
                for c in 0..2 * pairs {
                    u[c] = (i as f64 * alpha[c] + shift[c]).fract();
                }
                for p in 0..pairs {
                    let r = (-2.0 * u[2 * p].max(1e-300).ln()).sqrt();
                    let th = std::f64::consts::TAU * u[2 * p + 1];
                    z[2 * p] = r * th.cos();
                    z[2 * p + 1] = r * th.sin();
                }
                // Antithetic pair μ ± z, weights φ(μ ± z)/φ(z).
                let mut dot = 0.0;
                for f in 0..d {
                    dot += mu[f] * z[f];
                    w[f] = mu[f] - z[f];
                    z[f] += mu[f];
                }
                vals.push(ln_integrand(rows, &z[..d]) - dot - 0.5 * mu2);
                vals.push(ln_integrand(rows, &w) + dot - 0.5 * mu2);
            }
            shift_ln.push(ln_sum_exp(&vals) - (2.0 * n_points as f64).ln());
        }
        let ln_mean = ln_sum_exp(&shift_ln) - (SHIFTS as f64).ln();
        if ln_mean == f64::NEG_INFINITY {
            return (ln_mean, 0.0);
        }
        let rel: Vec<f64> = shift_ln.iter().map(|l| (l - ln_mean).exp()).collect();
        let var = rel.iter().map(|r| (r - 1.0) * (r - 1.0)).sum::<f64>() / (SHIFTS - 1) as f64;
        let rel_se = (var / SHIFTS as f64).sqrt();
        let abs_se = rel_se * ln_mean.exp();
        // 1e−5 absolute; for small odds, 1e−3 relative (ln within 0.003).
        let p = ln_mean.exp();
        if abs_se <= 1e-5 || (p < 1e-2 && rel_se <= 1e-3) || n_points >= max_points {
            return (ln_mean, 3.0 * rel_se);
        }
        n_points *= 2;
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn kronrod_rule_is_exact_for_polynomials() {
        // A 15-point Gauss–Kronrod rule integrates degree ≤ 22 exactly, its
        // 7-point Gauss part degree ≤ 13 (∫_{−1}^{1} x^n = 2/(n + 1), n even).
        let f = |n: i32| move |x: f64| x.powi(n);
        for n in 0..=22 {
            let (k, g) = gk15(&f(n), -1.0, 1.0);
            let want = if n % 2 == 0 {
                2.0 / (n as f64 + 1.0)
            } else {
                0.0
            };
            assert!((k - want).abs() < 1e-14, "kronrod x^{n}: {k}");
            if n <= 13 {
                assert!((g - want).abs() < 1e-14, "gauss x^{n}: {g}");
            }
        }
        // Degree 24 is beyond the Kronrod rule: the check has teeth.
        let (k, _) = gk15(&f(24), -1.0, 1.0);
        assert!((k - 2.0 / 25.0).abs() > 1e-12, "{k}");
    }

    #[test]
    fn integrates_the_normal_density() {
        // ∫ φ = 1 and ∫ φ(z)·Φ(z) dz = 1/2 (symmetry: P(X ≤ Z) for two iid
        // standard normals), both closed forms.
        let line = Line::new(std::iter::empty());
        let (ln, _) = line.integrate(1e-12);
        assert!(ln.abs() < 1e-12, "{ln}");
        let line = Line::new(std::iter::once((0.0, 1.0, 1.0)));
        let (ln, _) = line.integrate(1e-12);
        assert!((ln.exp() - 0.5).abs() < 1e-12);
    }

    #[test]
    fn lattice_estimate_of_a_closed_form() {
        // Three factors, one row: P(Z₁ + Z₂ + Z₃ + ε ≥ m) with unit
        // loadings and s = 1 is Φ(−m/2) (a sum of four standard normals has
        // sd 2): a closed form for the quasi-Monte Carlo path.
        for m in [-1.0, 0.5, 6.0, 20.0] {
            let row = Row {
                m: -m,
                s: 1.0,
                loads: vec![(0, 1.0), (1, 1.0), (2, 1.0)],
            };
            let (ln, rel) = rqmc(&[row], 3, 1, 1 << 15);
            let want = ln_phi(-m / 2.0);
            // 1e−4 absolute, and 1e−2 relative in the far tail (m = 20:
            // Φ(−10) ≈ 7.6e−24, reached through the mode shift).
            let (got, p) = (ln.exp(), want.exp());
            assert!(
                (got - p).abs() < 1e-4 && (ln - want).abs() < 1e-2,
                "m = {m}: {ln} vs {want}"
            );
            // The error estimate covers the actual error.
            assert!((got - p).abs() <= rel * got + 1e-12, "m = {m}: rel {rel}");
        }
    }

    #[test]
    fn cholesky_solves() {
        let mut a = vec![4.0, 2.0, 2.0, 3.0];
        let x = cholesky_solve(&mut a, &[2.0, 1.0], 2).expect("spd");
        // [[4,2],[2,3]]·[0.5, 0] = [2, 1].
        assert!((x[0] - 0.5).abs() < 1e-15 && x[1].abs() < 1e-15);
    }
}
