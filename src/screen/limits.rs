//! The limits a candidate can break, as an enum and a compact set, and the
//! tally of which limits rejected how much of the composition space.

/// The limits a candidate can break.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Limit {
    /// The balance oxide or a linear constraint is out of its range.
    CompositionLimits,
    /// The models are used outside their validity domain.
    ModelDomain,
    /// The chain could not be evaluated (e.g. nose below T_g).
    Evaluation,
    /// R_c above equipment rate / safety factor.
    CoolingRate,
    /// Melting temperature (10 Pa·s) above the furnace maximum − margin.
    MeltingTemperature,
    /// Liquidus above furnace maximum − margin.
    Liquidus,
    /// No feasible batch, or cost above the ceiling.
    Cost,
    /// T_g outside the requested range.
    GlassTransition,
    /// Working range outside the requested range.
    WorkingRange,
    /// P(glassy at the equipment rate) below the config's `min_probability`.
    Probability,
}

impl Limit {
    /// Every limit, in report order.
    pub const ALL: [Limit; 10] = [
        Limit::CompositionLimits,
        Limit::ModelDomain,
        Limit::Evaluation,
        Limit::CoolingRate,
        Limit::MeltingTemperature,
        Limit::Liquidus,
        Limit::Cost,
        Limit::GlassTransition,
        Limit::WorkingRange,
        Limit::Probability,
    ];

    /// A short label.
    pub fn label(self) -> &'static str {
        match self {
            Limit::CompositionLimits => {
                "composition limits (balance oxide or a linear constraint out of range)"
            }
            Limit::ModelDomain => "model validity domain",
            Limit::Evaluation => "kinetics could not be evaluated",
            Limit::CoolingRate => "critical rate above equipment rate / safety factor",
            Limit::MeltingTemperature => "melting temperature above furnace maximum minus margin",
            Limit::Liquidus => "liquidus above furnace maximum minus margin",
            Limit::Cost => "cost above ceiling (or no feasible batch)",
            Limit::GlassTransition => "glass transition outside range",
            Limit::WorkingRange => "working range outside range",
            Limit::Probability => {
                "probability of a glass at the equipment rate below min_probability"
            }
        }
    }

    fn bit(self) -> u16 {
        1 << (self as u16)
    }
}

/// A set of limits (the ones a candidate breaks).
#[derive(
    Debug, Clone, Copy, Default, PartialEq, Eq, Hash, serde::Serialize, serde::Deserialize,
)]
#[serde(transparent)]
pub struct LimitSet(u16);

impl LimitSet {
    /// The set as bits, one per limit (what a checkpoint stores).
    pub(crate) fn bits(self) -> u16 {
        self.0
    }

    /// The set stored as [`LimitSet::bits`].
    pub(crate) fn from_bits(bits: u16) -> LimitSet {
        LimitSet(bits)
    }

    /// Add a limit.
    pub fn insert(&mut self, l: Limit) {
        self.0 |= l.bit();
    }
    /// Whether the set holds `l`.
    pub fn contains(self, l: Limit) -> bool {
        self.0 & l.bit() != 0
    }
    /// No limit broken.
    pub fn is_empty(self) -> bool {
        self.0 == 0
    }
    /// Number of limits in the set.
    pub fn len(self) -> usize {
        self.0.count_ones() as usize
    }
    /// The limits in [`Limit::ALL`] order.
    pub fn iter(self) -> impl Iterator<Item = Limit> {
        Limit::ALL.into_iter().filter(move |l| self.contains(*l))
    }
    /// The labels joined with "; " (empty for no limit).
    pub fn labels(self) -> String {
        self.iter().map(Limit::label).collect::<Vec<_>>().join("; ")
    }
}

impl FromIterator<Limit> for LimitSet {
    fn from_iter<I: IntoIterator<Item = Limit>>(it: I) -> Self {
        let mut s = LimitSet::default();
        for l in it {
            s.insert(l);
        }
        s
    }
}

/// How many candidates broke each limit, and how many broke only that one.
#[derive(Debug, Clone, Default, PartialEq, serde::Serialize)]
pub struct LimitSummary {
    /// Distinct candidates kept (first-pass points and refined optima).
    pub evaluated: usize,
    /// Chain evaluations spent, refinement steps included.
    pub evaluations: usize,
    pub feasible: usize,
    /// (limit, candidates breaking it, candidates breaking only it), in
    /// [`Limit::ALL`] order.
    pub by_limit: Vec<(Limit, usize, usize)>,
    /// (limit a, limit b, candidates breaking both), a before b in
    /// [`Limit::ALL`] order: the limits that bind jointly.
    pub pairs: Vec<(Limit, Limit, usize)>,
}

impl LimitSummary {
    /// Count `n` candidates that met every other limit as breaking `l` alone
    /// (the Monte Carlo stage finds them after the point estimates were
    /// counted as feasible).
    pub fn reject_feasible(&mut self, l: Limit, n: usize) {
        if n == 0 {
            return;
        }
        self.feasible = self.feasible.saturating_sub(n);
        match self.by_limit.iter_mut().find(|e| e.0 == l) {
            Some(e) => {
                e.1 += n;
                e.2 += n;
            }
            None => {
                self.by_limit.push((l, n, n));
                self.by_limit.sort_by_key(|e| e.0);
            }
        }
    }

    /// Count one candidate that stands for `evaluations` chain evaluations.
    pub fn add(&mut self, broken: LimitSet, evaluations: usize) {
        self.evaluated += 1;
        self.evaluations += evaluations;
        if broken.is_empty() {
            self.feasible += 1;
        }
        let only = usize::from(broken.len() == 1);
        let list: Vec<Limit> = broken.iter().collect();
        for (i, &a) in list.iter().enumerate() {
            for &b in &list[i + 1..] {
                let (a, b) = if a < b { (a, b) } else { (b, a) };
                match self.pairs.iter_mut().find(|e| (e.0, e.1) == (a, b)) {
                    Some(e) => e.2 += 1,
                    None => {
                        self.pairs.push((a, b, 1));
                        self.pairs.sort_by_key(|e| (e.0, e.1));
                    }
                }
            }
        }
        for l in broken.iter() {
            match self.by_limit.iter_mut().find(|e| e.0 == l) {
                Some(e) => {
                    e.1 += 1;
                    e.2 += only;
                }
                None => {
                    self.by_limit.push((l, 1, only));
                    self.by_limit.sort_by_key(|e| e.0);
                }
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sets_and_tallies() {
        let s: LimitSet = [Limit::Cost, Limit::CoolingRate].into_iter().collect();
        assert!(s.contains(Limit::Cost) && !s.contains(Limit::Liquidus));
        assert_eq!(
            s.labels(),
            "critical rate above equipment rate / safety factor; cost above ceiling (or no feasible batch)"
        );
        let mut t = LimitSummary::default();
        t.add(s, 1);
        t.add([Limit::Cost].into_iter().collect(), 5);
        t.add(LimitSet::default(), 1);
        assert_eq!((t.evaluated, t.evaluations, t.feasible), (3, 7, 1));
        assert_eq!(
            t.by_limit,
            vec![(Limit::CoolingRate, 1, 0), (Limit::Cost, 2, 1)]
        );
        assert_eq!(t.pairs, vec![(Limit::CoolingRate, Limit::Cost, 1)]);
    }
}
