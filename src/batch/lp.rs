//! The least-cost batch LP of the screen, answered from kept optimal bases.
//!
//! The screen asks [`super::CostModel`] for the cost of a glass at every
//! candidate. The programme (see [`super::solve`]) has a fixed matrix — the
//! oxide yields of the raw materials — and only its row bounds move with the
//! target (target ± tolerance). Write it with one variable per row,
//! r_i = Σ_k a_ik x_k, as the bounded programme
//!
//!   min c·x   subject to   A x − r = 0,   0 ≤ x ≤ u,   t − tol ≤ r ≤ t + tol.
//!
//! A basis (m of the n + m variables, the others at one of their bounds) is
//! optimal when it is primal feasible (the basic values, from B z_B = −N z_N,
//! lie within their bounds) and dual feasible (reduced costs c_j − yᵀa_j,
//! Bᵀy = c_B, of the right sign for the bound each non-basic variable sits
//! at). Dual feasibility does not depend on the target, so an optimal basis
//! stays optimal for every target that keeps it primal feasible (Dantzig,
//! Linear Programming and Extensions, Princeton 1963, ch. 12, parametric
//! right-hand sides; Chvátal, Linear Programming, Freeman 1983, ch. 10, from
//! memory). This module keeps the bases the full solver found, each with its
//! LU factorisation (nalgebra), per thread, and tries them on the next target:
//! a solve of one m × m system (m ≤ the number of oxides) instead of building
//! and solving the programme.
//!
//! Only a basis that is *strictly* optimal is used: every basic variable at
//! least a margin inside its bounds and every reduced cost at least a margin
//! away from zero. Such a basis is the unique optimal basis of the programme,
//! so the answer is the same whichever bases a thread happens to keep: the
//! cost is a function of the target alone, as with the full solver, and does
//! not depend on the thread count or on the order candidates come in.
//! Degenerate or nearly degenerate programmes, and every failure, go to the
//! full solver.

use super::{BatchError, BatchSettings, RawMaterial};
use crate::composition::N_OXIDES;
use nalgebra::{DMatrix, DVector};
use std::cell::RefCell;

/// How many bases one thread keeps (most recently used first).
const KEPT_BASES: usize = 24;
/// A basic raw material must carry at least this much (kg per kg of glass) and
/// stay this far below its availability for the basis to count as strictly
/// primal feasible.
const ACCEPT_X: f64 = 1e-8;
/// A basic oxide row must sit this far (kg per kg of glass) inside its band.
const ACCEPT_R: f64 = 1e-10;
/// Classifying the full solver's answer: a raw material above this is basic.
const CLASSIFY_X: f64 = 1e-10;
/// Classifying the full solver's answer: a row this far inside its band is basic.
const CLASSIFY_R: f64 = 1e-12;
/// Reduced costs must be this far from zero, relative to the largest price.
const ACCEPT_DUAL: f64 = 1e-9;

/// Which way a cost was found (for tests and benchmarks).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum LpPath {
    /// A kept basis was optimal.
    KeptBasis,
    /// The full solver ran, and its optimal basis was kept.
    SolvedAndKept,
    /// The full solver ran (a degenerate programme, or one the fast path
    /// does not cover).
    Solved,
}

/// The programme's data for one shelf of raw materials, compared on every
/// call so a thread's kept bases never serve another shelf.
#[derive(Default)]
struct Shelf {
    /// a[i * nr + k]: oxide i delivered per kg of raw material k (yield × retention).
    a: Vec<f64>,
    yields: Vec<f64>,
    /// The settings' retention factors and each raw material's supply
    /// limit, the inputs of `a` and `upper` (compared instead of them: equal
    /// inputs give equal products and quotients).
    retention: [f64; N_OXIDES],
    available: Vec<Option<f64>>,
    price: Vec<f64>,
    upper: Vec<f64>,
    tol: f64,
    glass_kg: f64,
    /// Bit i of `supplies[k]`: raw material k yields oxide i (> 0).
    supplies: Vec<u64>,
    largest_price: f64,
}

impl Shelf {
    fn matches(&self, raws: &[RawMaterial], s: &BatchSettings, glass_kg: f64) -> bool {
        let nr = raws.len();
        let same = |a: f64, b: f64| a.to_bits() == b.to_bits();
        if self.price.len() != nr
            || !same(self.tol, s.tolerance_wt_pct / 100.0)
            || !same(self.glass_kg, glass_kg)
            || !self
                .retention
                .iter()
                .zip(&s.retention)
                .all(|(&a, &b)| same(a, b))
        {
            return false;
        }
        raws.iter().enumerate().all(|(k, r)| {
            same(r.price_per_kg, self.price[k])
                && r.available_kg.map(f64::to_bits) == self.available[k].map(f64::to_bits)
                && r.yields
                    .iter()
                    .zip(&self.yields[k * N_OXIDES..(k + 1) * N_OXIDES])
                    .all(|(&a, &b)| same(a, b))
        })
    }

    fn new(raws: &[RawMaterial], s: &BatchSettings, glass_kg: f64) -> Shelf {
        let nr = raws.len();
        let mut a = vec![0.0; N_OXIDES * nr];
        let mut yields = vec![0.0; N_OXIDES * nr];
        let mut supplies = vec![0u64; nr];
        for (k, r) in raws.iter().enumerate() {
            for i in 0..N_OXIDES {
                a[i * nr + k] = r.yields[i] * s.retention[i];
                yields[k * N_OXIDES + i] = r.yields[i];
                if r.yields[i] > 0.0 {
                    supplies[k] |= 1 << i;
                }
            }
        }
        Shelf {
            a,
            yields,
            retention: s.retention,
            available: raws.iter().map(|r| r.available_kg).collect(),
            price: raws.iter().map(|r| r.price_per_kg).collect(),
            upper: raws.iter().map(|r| upper_of(r, glass_kg)).collect(),
            tol: s.tolerance_wt_pct / 100.0,
            glass_kg,
            supplies,
            largest_price: raws
                .iter()
                .map(|r| r.price_per_kg.abs())
                .fold(1.0, f64::max),
        }
    }
}

fn upper_of(r: &RawMaterial, glass_kg: f64) -> f64 {
    r.available_kg.map_or(f64::INFINITY, |a| a / glass_kg)
}

/// One kept optimal basis of the programme with usable raw materials `usable`
/// and oxide rows `rows` (bit masks).
struct Kept {
    usable: u64,
    rows: u64,
    /// Basic raw materials (bits) and basic rows (bits).
    basic_x: u64,
    basic_r: u64,
    /// Non-basic raw materials at their availability, and non-basic rows at
    /// the top of their band (the others sit at 0 and at the bottom).
    upper_x: u64,
    upper_r: u64,
    lu: nalgebra::linalg::LU<f64, nalgebra::Dyn, nalgebra::Dyn>,
    rhs: DVector<f64>,
}

#[derive(Default)]
struct Cache {
    shelf: Option<Shelf>,
    kept: Vec<Kept>,
    /// Raw materials per kg of glass (the answer being built).
    x: Vec<f64>,
}

thread_local! {
    static CACHE: RefCell<Cache> = RefCell::new(Cache::default());
}

/// The rows (oxides) of the programme in order, as positions 0..m.
fn row_list(rows: u64) -> impl Iterator<Item = usize> {
    (0..N_OXIDES).filter(move |&i| rows & (1 << i) != 0)
}

impl Kept {
    /// The basic solution for `target` if strictly feasible: fills `x`
    /// (all raw materials, zero for non-usable) and returns true.
    fn solve(&mut self, shelf: &Shelf, target: &[f64; N_OXIDES], x: &mut [f64]) -> bool {
        let nr = shelf.price.len();
        let tol = shelf.tol;
        for (p, i) in row_list(self.rows).enumerate() {
            let mut v = if self.basic_r & (1 << i) != 0 {
                0.0
            } else if self.upper_r & (1 << i) != 0 {
                target[i] + tol
            } else {
                target[i] - tol
            };
            let mut up = self.upper_x;
            while up != 0 {
                let k = up.trailing_zeros() as usize;
                up &= up - 1;
                v -= shelf.a[i * nr + k] * shelf.upper[k];
            }
            self.rhs[p] = v;
        }
        if !self.lu.solve_mut(&mut self.rhs) {
            return false;
        }
        for (k, xk) in x.iter_mut().enumerate() {
            *xk = if self.upper_x & (1 << k) != 0 {
                shelf.upper[k]
            } else {
                0.0
            };
        }
        // Basic variables in column order: raw materials by index, then rows.
        let mut p = 0;
        let mut bx = self.basic_x;
        while bx != 0 {
            let k = bx.trailing_zeros() as usize;
            bx &= bx - 1;
            let v = self.rhs[p];
            p += 1;
            if !(v > ACCEPT_X && v < shelf.upper[k] - ACCEPT_X) {
                return false;
            }
            x[k] = v;
        }
        let mut br = self.basic_r;
        while br != 0 {
            let i = br.trailing_zeros() as usize;
            br &= br - 1;
            let v = self.rhs[p];
            p += 1;
            if !(v > target[i] - tol + ACCEPT_R && v < target[i] + tol - ACCEPT_R) {
                return false;
            }
        }
        true
    }
}

/// The programme's shape for a target: usable raw materials and rows, as
/// [`super::solve`] builds them, or `None` when the full solver must answer
/// (an oxide without a supplier: it reports which).
fn shape(shelf: &Shelf, target: &[f64; N_OXIDES]) -> Option<(u64, u64)> {
    let tol = shelf.tol;
    let mut wanted = 0u64;
    for (i, &t) in target.iter().enumerate() {
        if t > tol {
            wanted |= 1 << i;
        }
    }
    let mut usable = 0u64;
    let mut rows = 0u64;
    for (k, &sup) in shelf.supplies.iter().enumerate() {
        if sup & !wanted == 0 {
            usable |= 1 << k;
            rows |= sup;
        }
    }
    (wanted & !rows == 0).then_some((usable, rows))
}

/// The cost per kg of glass of the least-cost batch, `Σ price × kg`, summed
/// over the raw materials in order as [`super::CostModel`] does.
fn cost_of(shelf: &Shelf, x: &[f64]) -> f64 {
    shelf.price.iter().zip(x).map(|(p, m)| p * m).sum()
}

/// Make a kept basis from the full solver's answer `x_full` when it is a
/// strictly optimal, non-degenerate vertex.
fn classify(
    shelf: &Shelf,
    target: &[f64; N_OXIDES],
    usable: u64,
    rows: u64,
    x_full: &[f64],
) -> Option<Kept> {
    let nr = shelf.price.len();
    let tol = shelf.tol;
    let (mut basic_x, mut upper_x, mut basic_r, mut upper_r) = (0u64, 0u64, 0u64, 0u64);
    for (k, (&v, &u)) in x_full.iter().zip(&shelf.upper).enumerate() {
        if usable & (1 << k) == 0 {
            continue;
        }
        if v > CLASSIFY_X && v < u - CLASSIFY_X {
            basic_x |= 1 << k;
        } else if v >= u - CLASSIFY_X {
            upper_x |= 1 << k;
        }
    }
    for i in row_list(rows) {
        let r: f64 = (0..nr).map(|k| shelf.a[i * nr + k] * x_full[k]).sum();
        if r > target[i] - tol + CLASSIFY_R && r < target[i] + tol - CLASSIFY_R {
            basic_r |= 1 << i;
        } else if r >= target[i] + tol - CLASSIFY_R {
            upper_r |= 1 << i;
        }
    }
    let m = rows.count_ones() as usize;
    if (basic_x.count_ones() + basic_r.count_ones()) as usize != m || m == 0 {
        return None;
    }
    // B: columns of the basic raw materials (their yields in the rows), then
    // −e_p for each basic row.
    let row_pos: Vec<usize> = row_list(rows).collect();
    let mut b = DMatrix::<f64>::zeros(m, m);
    let mut col = 0;
    let mut cb = Vec::with_capacity(m);
    for k in 0..nr {
        if basic_x & (1 << k) != 0 {
            for (p, &i) in row_pos.iter().enumerate() {
                b[(p, col)] = shelf.a[i * nr + k];
            }
            cb.push(shelf.price[k]);
            col += 1;
        }
    }
    for (p, &i) in row_pos.iter().enumerate() {
        if basic_r & (1 << i) != 0 {
            b[(p, col)] = -1.0;
            cb.push(0.0);
            col += 1;
        }
    }
    // Duals: Bᵀ y = c_B.
    let mut y = DVector::from_vec(cb);
    if !b.transpose().lu().solve_mut(&mut y) || y.iter().any(|v| !v.is_finite()) {
        return None;
    }
    let eps = ACCEPT_DUAL * shelf.largest_price;
    for k in 0..nr {
        if usable & (1 << k) == 0 || basic_x & (1 << k) != 0 {
            continue;
        }
        let d = shelf.price[k]
            - row_pos
                .iter()
                .enumerate()
                .map(|(p, &i)| y[p] * shelf.a[i * nr + k])
                .sum::<f64>();
        let ok = if upper_x & (1 << k) != 0 {
            d < -eps
        } else {
            d > eps
        };
        if !ok {
            return None;
        }
    }
    for (p, &i) in row_pos.iter().enumerate() {
        if basic_r & (1 << i) != 0 {
            continue;
        }
        // The column of r_i is −e_p with cost 0: reduced cost y_p.
        let ok = if upper_r & (1 << i) != 0 {
            y[p] < -eps
        } else {
            y[p] > eps
        };
        if !ok {
            return None;
        }
    }
    let lu = b.lu();
    // Refuse a nearly singular basis: its solutions would not be trustworthy.
    let d = lu.u().diagonal().map(f64::abs);
    if d.min().partial_cmp(&(1e-12 * d.max())) != Some(std::cmp::Ordering::Greater) {
        return None;
    }
    Some(Kept {
        usable,
        rows,
        basic_x,
        basic_r,
        upper_x,
        upper_r,
        lu,
        rhs: DVector::zeros(m),
    })
}

/// The least-cost batch cost per kg of glass for `target` (kg oxide per kg
/// glass), from a kept basis when one is strictly optimal, else from `full`
/// (the full solver, which returns kg of each raw material per kg of glass).
///
/// # Errors
/// Those of `full`.
pub(crate) fn least_cost(
    raws: &[RawMaterial],
    target: &[f64; N_OXIDES],
    glass_kg: f64,
    s: &BatchSettings,
    full: impl FnOnce() -> Result<Vec<f64>, BatchError>,
) -> Result<(f64, LpPath), BatchError> {
    let plain = |x: Vec<f64>| -> f64 { raws.iter().zip(&x).map(|(r, m)| r.price_per_kg * m).sum() };
    // Bit masks hold the raw materials and the oxides.
    if raws.len() > 64 || N_OXIDES > 64 || !target.iter().all(|t| t.is_finite()) {
        return full().map(|x| (plain(x), LpPath::Solved));
    }
    CACHE.with(|cell| {
        let mut cache = cell.borrow_mut();
        let cache = &mut *cache;
        if !cache
            .shelf
            .as_ref()
            .is_some_and(|sh| sh.matches(raws, s, glass_kg))
        {
            cache.shelf = Some(Shelf::new(raws, s, glass_kg));
            cache.kept.clear();
        }
        let Some(shelf) = cache.shelf.as_ref() else {
            return full().map(|x| (plain(x), LpPath::Solved));
        };
        let Some((usable, rows)) = shape(shelf, target) else {
            return full().map(|x| (plain(x), LpPath::Solved));
        };
        cache.x.resize(raws.len(), 0.0);
        for j in 0..cache.kept.len() {
            let kept = &mut cache.kept[j];
            if kept.usable == usable && kept.rows == rows && kept.solve(shelf, target, &mut cache.x)
            {
                let cost = cost_of(shelf, &cache.x);
                // Most recently used first.
                cache.kept[..=j].rotate_right(1);
                return Ok((cost, LpPath::KeptBasis));
            }
        }
        let x_full = full()?;
        if let Some(mut kept) = classify(shelf, target, usable, rows, &x_full) {
            if kept.solve(shelf, target, &mut cache.x) {
                let cost = cost_of(shelf, &cache.x);
                if cache.kept.len() == KEPT_BASES {
                    cache.kept.pop();
                }
                cache.kept.insert(0, kept);
                return Ok((cost, LpPath::SolvedAndKept));
            }
        }
        Ok((plain(x_full), LpPath::Solved))
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::composition::{Composition, Oxide};

    /// xorshift64 (Marsaglia 2003) for reproducible pseudo-random targets.
    fn rng(mut state: u64) -> impl FnMut() -> f64 {
        move || {
            state ^= state << 13;
            state ^= state >> 7;
            state ^= state << 17;
            (state >> 11) as f64 / (1u64 << 53) as f64
        }
    }

    fn full_cost(
        raws: &[RawMaterial],
        target: &[f64; N_OXIDES],
        s: &BatchSettings,
    ) -> Result<f64, BatchError> {
        Ok(super::super::solve(raws, target, 1.0, s)?
            .iter()
            .zip(raws)
            .map(|(m, r)| m * r.price_per_kg)
            .sum())
    }

    /// Random soda-lime-type glasses in mol% within the demo screen's box.
    fn random_glass(next: &mut impl FnMut() -> f64) -> Composition {
        let na = 10.0 + 8.0 * next();
        let k = if next() < 0.3 { 0.0 } else { 3.0 * next() };
        let ca = 6.0 + 8.0 * next();
        let mg = if next() < 0.3 { 0.0 } else { 5.0 * next() };
        let al = if next() < 0.3 { 0.0 } else { 4.0 * next() };
        let b = if next() < 0.3 { 0.0 } else { 5.0 * next() };
        let si = 100.0 - na - k - ca - mg - al - b;
        let mut x = [0.0; N_OXIDES];
        for (o, v) in [
            (Oxide::SiO2, si),
            (Oxide::Na2O, na),
            (Oxide::K2O, k),
            (Oxide::CaO, ca),
            (Oxide::MgO, mg),
            (Oxide::Al2O3, al),
            (Oxide::B2O3, b),
        ] {
            x[o.index()] = v;
        }
        Composition::from_mol_percent_array(&x, 1e-9).unwrap()
    }

    #[test]
    fn kept_bases_give_the_full_solvers_optimum() {
        // Reference: the good_lp/microlp programme of `super::solve` (an
        // independent simplex implementation), on 3000 random glasses of the
        // demo shelf; then the same with every price perturbed, and with an
        // availability limit, so other bases are optimal.
        let shelf = crate::files::raw_materials::read_raw_materials(None).unwrap();
        let mut next = rng(0x2545f4914f6cdd1d);
        let mut variants = vec![shelf.clone()];
        let mut dear = shelf.clone();
        for r in &mut dear {
            r.price_per_kg *= 0.5 + next();
        }
        variants.push(dear);
        // The raw material a mid-range glass uses most, on the shelf at 95 %
        // of that use: its availability binds for many glasses.
        let mut scarce = shelf.clone();
        let mid = random_glass(&mut || 0.5).wt_percent().map(|v| v / 100.0);
        let x = super::super::solve(&shelf, &mid, 1.0, &BatchSettings::default()).unwrap();
        let most = (0..x.len()).max_by(|&a, &b| x[a].total_cmp(&x[b])).unwrap();
        scarce[most].available_kg = Some(0.95 * x[most]);
        variants.push(scarce);
        let s = BatchSettings::default();
        for raws in &variants {
            let (mut kept, mut feasible) = (0, 0);
            for _ in 0..1000 {
                let glass = random_glass(&mut next);
                let target = glass.wt_percent().map(|v| v / 100.0);
                let got = least_cost(raws, &target, 1.0, &s, || {
                    super::super::solve(raws, &target, 1.0, &s)
                });
                let want = match full_cost(raws, &target, &s) {
                    Ok(want) => want,
                    Err(e) => {
                        // Infeasible (the scarce shelf): the same error.
                        assert_eq!(got, Err(e));
                        continue;
                    }
                };
                let (got, path) = got.unwrap();
                assert!(
                    (got - want).abs() <= 1e-9 * want.abs(),
                    "{glass:?}: {got} vs {want} ({path:?})"
                );
                kept += usize::from(path == LpPath::KeptBasis);
                feasible += 1;
            }
            // Most targets reuse a kept basis (otherwise the fast path would
            // not be exercised by this test).
            assert!(feasible >= 300, "only {feasible} feasible");
            assert!(
                2 * kept > feasible,
                "only {kept} of {feasible} from kept bases"
            );
        }
    }

    #[test]
    fn the_answer_does_not_depend_on_what_was_kept() {
        // The same targets in two orders, from a fresh cache each time, give
        // bit-identical costs (the screen's results must not depend on the
        // thread count).
        let raws = crate::files::raw_materials::read_raw_materials(None).unwrap();
        let s = BatchSettings::default();
        let mut next = rng(0x9e3779b97f4a7c15);
        let targets: Vec<[f64; N_OXIDES]> = (0..400)
            .map(|_| random_glass(&mut next).wt_percent().map(|v| v / 100.0))
            .collect();
        let run = |order: &mut dyn Iterator<Item = &[f64; N_OXIDES]>| -> Vec<(usize, u64)> {
            CACHE.with(|c| *c.borrow_mut() = Cache::default());
            order
                .map(|t| {
                    let (c, _) =
                        least_cost(&raws, t, 1.0, &s, || super::super::solve(&raws, t, 1.0, &s))
                            .unwrap();
                    (targets.iter().position(|u| u == t).unwrap(), c.to_bits())
                })
                .collect()
        };
        let mut forward = run(&mut targets.iter());
        let mut backward = run(&mut targets.iter().rev());
        forward.sort_unstable();
        backward.sort_unstable();
        assert_eq!(forward, backward);
    }

    #[test]
    fn a_kept_basis_never_serves_another_shelf() {
        // Source: the good_lp/microlp programme of `super::solve`. One
        // thread alternates, target by target, between the demo shelf and
        // shelves that differ from it in one input of the programme each (a
        // yield, a retention factor, an availability, a price, the batch
        // size); every answer must be the full solver's for its own shelf.
        let base = crate::files::raw_materials::read_raw_materials(None).unwrap();
        let s = BatchSettings::default();
        let mut next = rng(0x0dd5_eed5_u64);
        let mid = random_glass(&mut || 0.5).wt_percent().map(|v| v / 100.0);
        let x = super::super::solve(&base, &mid, 1.0, &s).unwrap();
        let most = (0..x.len()).max_by(|&a, &b| x[a].total_cmp(&x[b])).unwrap();
        let mut yielded = base.clone();
        let first = (0..N_OXIDES)
            .find(|&i| yielded[most].yields[i] > 0.0)
            .unwrap();
        yielded[most].yields[first] *= 0.97;
        let mut retained = s;
        retained.retention[first] = 0.9;
        let mut scarce = base.clone();
        scarce[most].available_kg = Some(0.95 * x[most]);
        let mut dear = base.clone();
        dear[most].price_per_kg *= 3.0;
        let shelves: Vec<(&[RawMaterial], &BatchSettings, f64)> = vec![
            (&base, &s, 1.0),
            (&yielded, &s, 1.0),
            (&base, &retained, 1.0),
            (&scarce, &s, 1.0),
            (&dear, &s, 1.0),
            (&base, &s, 2.5),
        ];
        CACHE.with(|c| *c.borrow_mut() = Cache::default());
        for n in 0..600 {
            let target = random_glass(&mut next).wt_percent().map(|v| v / 100.0);
            // The base shelf first, so its bases are kept, then another.
            for &(raws, st, kg) in [shelves[0], shelves[1 + n % 5]].iter() {
                let got = least_cost(raws, &target, kg, st, || {
                    super::super::solve(raws, &target, kg, st)
                });
                let want = super::super::solve(raws, &target, kg, st).map(|x| {
                    raws.iter()
                        .zip(&x)
                        .map(|(r, m)| r.price_per_kg * m)
                        .sum::<f64>()
                });
                match (got, want) {
                    (Ok((got, path)), Ok(want)) => assert!(
                        (got - want).abs() <= 1e-9 * want.abs(),
                        "shelf {}: {got} vs {want} ({path:?})",
                        1 + n % 5
                    ),
                    (Err(a), Err(b)) => assert_eq!(a, b),
                    (got, want) => panic!("shelf {}: {got:?} vs {want:?}", 1 + n % 5),
                }
            }
        }
    }

    #[test]
    fn a_missing_supplier_still_names_the_oxide() {
        let raws = vec![
            RawMaterial::from_formula("sand", "SiO2", 100.0, 0.1, None).unwrap(),
            RawMaterial::from_formula("soda ash", "Na2CO3", 100.0, 0.4, None).unwrap(),
        ];
        let glass = Composition::parse(
            "SiO2=70 Na2O=20 Li2O=10",
            crate::composition::Basis::WtPercent,
            0.0,
        )
        .unwrap();
        let target = glass.wt_percent().map(|v| v / 100.0);
        let s = BatchSettings::default();
        let got = least_cost(&raws, &target, 1.0, &s, || {
            super::super::solve(&raws, &target, 1.0, &s)
        });
        assert_eq!(got, Err(BatchError::NoSupplier(vec![Oxide::Li2O])));
    }
}
