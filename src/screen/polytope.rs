//! The feasible composition set of a screen as a polytope in the free
//! coordinates: `A y ≤ b` holds the free oxides' limits, the balance oxide's
//! limits (the balance is `100 − Σ y`) and the linear constraints, each row
//! with the label a scientist reads ("SiO2 min", "Na2O + K2O cap").
//!
//! The first pass maps unit-cube points into this polytope without rejection
//! by a triangular map: coordinate d is placed linearly in the interval that
//! the polytope allows it once coordinates 1 … d−1 are fixed. Those intervals
//! come from the projections of the polytope onto its leading coordinates,
//! computed once by Fourier–Motzkin elimination. Every interior point of the
//! cube lands inside the polytope, and point n depends on cube point n alone,
//! so the pass stays addressable by index.
//!
//! References
//! - M. Rosenblatt, Ann. Math. Statist. 23 (1952) 470–472,
//!   doi:10.1214/aoms/1177729394 (the sequential conditional map of a cube).
//! - T. S. Motzkin, "Beiträge zur Theorie der linearen Ungleichungen",
//!   dissertation, Basel (1936); G. B. Dantzig, B. C. Eaves, J. Combin.
//!   Theory A 14 (1973) 288–297, doi:10.1016/0097-3165(73)90004-6
//!   (Fourier–Motzkin elimination).

use super::problem::ScreenProblem;
use super::simplex::Simplex;

/// Slack below which a row counts as active (mol%).
pub const ACTIVE_TOL_MOL_PCT: f64 = 1e-3;

/// One linear inequality `a · y ≤ b` over the free coordinates.
#[derive(Debug, Clone, PartialEq)]
pub struct Row {
    pub a: Vec<f64>,
    pub b: f64,
    /// What the row limits, e.g. "SiO2 min" or "Na2O + K2O cap".
    pub label: String,
}

/// One inequality `a · y ≤ b` as (a, b).
type Ineq = (Vec<f64>, f64);

/// The polytope of feasible free coordinates.
#[derive(Debug, Clone)]
pub struct Polytope {
    pub rows: Vec<Row>,
    /// Projections onto the leading coordinates: `levels[d]` holds the
    /// inequalities over y_0 … y_d (coefficients beyond d are zero), or
    /// `None` when the polytope is empty.
    levels: Option<Vec<Vec<Ineq>>>,
}

impl Polytope {
    /// The polytope of a screen problem over the simplex's free coordinates.
    pub fn new(problem: &ScreenProblem, simplex: &Simplex) -> Self {
        let n = simplex.dims();
        let mut rows = Vec::new();
        let unit = |d: usize, s: f64| {
            let mut a = vec![0.0; n];
            a[d] = s;
            a
        };
        for (d, &(o, lo, hi)) in simplex.free.iter().enumerate() {
            rows.push(Row {
                a: unit(d, -1.0),
                b: -lo,
                label: format!("{o} min"),
            });
            rows.push(Row {
                a: unit(d, 1.0),
                b: hi,
                label: format!("{o} max"),
            });
        }
        // Balance x_b = 100 − Σ y: x_b ≥ lo ⇔ Σ y ≤ 100 − lo; x_b ≤ hi ⇔ −Σ y ≤ hi − 100.
        let (bo, blo, bhi) = simplex.balance;
        rows.push(Row {
            a: vec![1.0; n],
            b: 100.0 - blo,
            label: format!("{bo} min"),
        });
        rows.push(Row {
            a: vec![-1.0; n],
            b: bhi - 100.0,
            label: format!("{bo} max"),
        });
        // A linear constraint Σ w_i x_i with x_b = 100 − Σ y:
        // Σ_free (w_i − w_b) y_i + 100 w_b.
        let wb = |c: &super::problem::LinearConstraint| c.weights[bo.index()];
        for c in &problem.constraints {
            let a: Vec<f64> = simplex
                .free
                .iter()
                .map(|(o, ..)| c.weights[o.index()] - wb(c))
                .collect();
            let k = 100.0 * wb(c);
            if let Some(m) = c.min {
                rows.push(Row {
                    a: a.iter().map(|v| -v).collect(),
                    b: k - m,
                    label: format!("{} min", c.text),
                });
            }
            if let Some(m) = c.max {
                rows.push(Row {
                    a: a.clone(),
                    b: m - k,
                    label: format!("{} cap", c.text),
                });
            }
        }
        let levels = projections(&rows, n);
        Polytope { rows, levels }
    }

    /// A polytope from its rows (all of the same length).
    pub fn from_rows(rows: Vec<Row>) -> Self {
        let n = rows.first().map(|r| r.a.len()).unwrap_or(0);
        let levels = projections(&rows, n);
        Polytope { rows, levels }
    }

    /// Number of free coordinates.
    pub fn dims(&self) -> usize {
        self.rows.first().map(|r| r.a.len()).unwrap_or(0)
    }

    /// Whether no composition meets the limits and constraints.
    pub fn is_empty(&self) -> bool {
        self.levels.is_none()
    }

    /// `b − a · y` of every row (≥ 0 inside).
    pub fn slacks(&self, y: &[f64]) -> Vec<f64> {
        self.rows.iter().map(|r| r.b - dot(&r.a, y)).collect()
    }

    /// The rows whose slack is below `tol` mol%.
    pub fn active(&self, y: &[f64], tol: f64) -> Vec<usize> {
        self.slacks(y)
            .iter()
            .enumerate()
            .filter(|(_, s)| **s <= tol)
            .map(|(i, _)| i)
            .collect()
    }

    /// Map a point of the open unit cube into the polytope (the triangular
    /// map of the module doc). `None` when the polytope is empty.
    pub fn map_unit(&self, u: &[f64]) -> Option<Vec<f64>> {
        let levels = self.levels.as_ref()?;
        let n = self.dims();
        let mut y = vec![0.0; n];
        for d in 0..n {
            let (mut lo, mut hi) = (f64::NEG_INFINITY, f64::INFINITY);
            for (a, b) in &levels[d] {
                let ad = a[d];
                if ad.abs() < 1e-12 {
                    continue;
                }
                let rest = b - dot(&a[..d], &y[..d]);
                let v = rest / ad;
                if ad > 0.0 {
                    hi = hi.min(v);
                } else {
                    lo = lo.max(v);
                }
            }
            // Rounding can cross the ends of a degenerate interval.
            if hi < lo {
                let m = 0.5 * (lo + hi);
                lo = m;
                hi = m;
            }
            y[d] = lo + u[d].clamp(0.0, 1.0) * (hi - lo);
        }
        Some(y)
    }
}

fn dot(a: &[f64], b: &[f64]) -> f64 {
    a.iter().zip(b).map(|(x, y)| x * y).sum()
}

/// Fourier–Motzkin projections of `rows` onto y_0 … y_d for every d, or `None`
/// when the system has no solution.
fn projections(rows: &[Row], n: usize) -> Option<Vec<Vec<Ineq>>> {
    let mut cur: Vec<Ineq> = rows.iter().map(|r| (r.a.clone(), r.b)).collect();
    cur = normalise(cur)?;
    let mut levels = vec![Vec::new(); n];
    for d in (0..n).rev() {
        levels[d] = cur.clone();
        if d == 0 {
            // The last check: the interval of y_0 must not be empty.
            let (mut lo, mut hi) = (f64::NEG_INFINITY, f64::INFINITY);
            for (a, b) in &cur {
                if a[0] > 0.0 {
                    hi = hi.min(b / a[0]);
                } else if a[0] < 0.0 {
                    lo = lo.max(b / a[0]);
                }
            }
            if hi < lo - 1e-9 {
                return None;
            }
            break;
        }
        let (mut pos, mut neg, mut zero) = (Vec::new(), Vec::new(), Vec::new());
        for r in cur {
            if r.0[d] > 1e-12 {
                pos.push(r);
            } else if r.0[d] < -1e-12 {
                neg.push(r);
            } else {
                zero.push(r);
            }
        }
        let mut next = zero;
        for (ap, bp) in &pos {
            for (an, bn) in &neg {
                // Scale so y_d cancels: ap/ap_d + an/|an_d|.
                let (sp, sn) = (1.0 / ap[d], 1.0 / -an[d]);
                let mut a: Vec<f64> = ap.iter().zip(an).map(|(p, q)| sp * p + sn * q).collect();
                a[d] = 0.0;
                next.push((a, sp * bp + sn * bn));
            }
        }
        cur = normalise(next)?;
    }
    Some(levels)
}

/// Scale every row to unit largest coefficient, drop duplicates (keeping the
/// tightest), drop rows without coefficients (or report infeasibility).
fn normalise(rows: Vec<Ineq>) -> Option<Vec<Ineq>> {
    let mut out: Vec<Ineq> = Vec::new();
    for (a, b) in rows {
        let m = a.iter().fold(0.0f64, |m, v| m.max(v.abs()));
        if m < 1e-12 {
            if b < -1e-9 {
                return None;
            }
            continue;
        }
        let a: Vec<f64> = a.iter().map(|v| v / m).collect();
        let b = b / m;
        match out
            .iter_mut()
            .find(|(o, _)| o.iter().zip(&a).all(|(x, y)| (x - y).abs() < 1e-12))
        {
            Some(o) => o.1 = o.1.min(b),
            None => out.push((a, b)),
        }
    }
    Some(out)
}

#[cfg(test)]
pub(crate) mod tests {
    use super::*;

    pub(crate) fn row(a: &[f64], b: f64) -> Row {
        Row {
            a: a.to_vec(),
            b,
            label: String::new(),
        }
    }

    /// A triangle-cut box: 0 ≤ y ≤ 10, y0 + y1 + y2 ≤ 12, y0 − y1 ≥ −2
    /// (the SQP tests use it too).
    pub(crate) fn cut_box() -> Polytope {
        let mut rows = Vec::new();
        for d in 0..3 {
            let mut a = vec![0.0; 3];
            a[d] = 1.0;
            rows.push(row(&a, 10.0));
            a[d] = -1.0;
            rows.push(row(&a, 0.0));
        }
        rows.push(row(&[1.0, 1.0, 1.0], 12.0));
        rows.push(row(&[-1.0, 1.0, 0.0], 2.0));
        Polytope::from_rows(rows)
    }

    #[test]
    fn every_cube_point_maps_inside() {
        let p = cut_box();
        assert!(!p.is_empty());
        // A plain grid of the cube, ends included.
        let ticks = [0.0, 0.1, 0.37, 0.5, 0.81, 1.0];
        for a in ticks {
            for b in ticks {
                for c in ticks {
                    let y = p.map_unit(&[a, b, c]).unwrap();
                    let worst = p.slacks(&y).iter().fold(f64::INFINITY, |m, s| m.min(*s));
                    assert!(worst >= -1e-12, "{a} {b} {c} → {y:?} (slack {worst})");
                }
            }
        }
        // The map reaches the extremes: u = 0 gives y0's least value (0), u = 1
        // on the first coordinate its largest (10, allowed by y0 − y1 ≥ −2).
        assert!(p.map_unit(&[0.0, 0.5, 0.5]).unwrap()[0].abs() < 1e-12);
        assert!((p.map_unit(&[1.0, 0.0, 0.0]).unwrap()[0] - 10.0).abs() < 1e-12);
        // Given y0 = 0, y1 ≤ 2 (y0 − y1 ≥ −2): u1 = 1 gives exactly 2.
        assert!((p.map_unit(&[0.0, 1.0, 0.5]).unwrap()[1] - 2.0).abs() < 1e-12);
    }

    #[test]
    fn empty_polytope_is_reported() {
        let p = Polytope::from_rows(vec![row(&[1.0, 0.0], 1.0), row(&[-1.0, 0.0], -2.0)]);
        assert!(p.is_empty() && p.map_unit(&[0.5, 0.5]).is_none());
    }
}
