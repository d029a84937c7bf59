//! Text of a Monte Carlo propagation: the band of R_c, the probability of a
//! glass at the user's quench, and which input would narrow the band most.

use super::text::sig;
use crate::assess::VOUCH_CRITICAL_RATE_K_PER_S;
use crate::uncertainty::Propagation;
use crate::units::{KelvinPerSecond, RateUnit};
use std::fmt::Write as _;

/// The uncertainty block `eval --uncertainty` prints, rates in `unit`.
pub fn propagation_text(p: &Propagation, unit: RateUnit) -> String {
    let r = |k_per_s: f64| match unit {
        RateUnit::PerSecond => sig(k_per_s),
        RateUnit::PerMinute => sig(KelvinPerSecond(k_per_s).per_minute()),
    };
    let u = unit.symbol();
    let mut o = String::new();
    let _ = writeln!(
        o,
        "\nUncertainty: {} Latin hypercube draws (seed {}); only as good as the spreads given",
        p.draws, p.seed
    );
    let _ = writeln!(
        o,
        "  critical rate  5 %: {} {u}   50 %: {} {u}   95 %: {} {u}",
        r(p.critical_rate_p05_k_per_s),
        r(p.critical_rate_p50_k_per_s),
        r(p.critical_rate_p95_k_per_s)
    );
    let beyond = p.beyond_vouching();
    if !beyond.is_empty() {
        // The same words as the point estimate's note (assess::vouch).
        let _ = writeln!(
            o,
            "  beyond what the model can vouch for: {} (below {} K/s; a real melt would crystallise from defects or impurities long before)",
            beyond.join(", "),
            sig(VOUCH_CRITICAL_RATE_K_PER_S)
        );
    }
    let _ = writeln!(
        o,
        "  sd of log10 R_c: {:.3} decades",
        p.log10_critical_rate_sd
    );
    if let (Some(q), Some(pg), Some(se)) = (
        p.quench_rate_k_per_s,
        p.probability_glassy,
        p.probability_glassy_se,
    ) {
        // With every draw on one side the binomial error is 0; the rule of
        // three gives the 95 % bound instead (Hanley & Lippman-Hand 1983,
        // JAMA 249, 1743).
        let bound = crate::uncertainty::rule_of_three(p.draws);
        let told = if pg >= 1.0 {
            format!(
                "≥ {:.3} (95 %: no draw crystallised; rule of three)",
                1.0 - bound
            )
        } else if pg <= 0.0 {
            format!("≤ {bound:.3} (95 %: no draw stayed glassy; rule of three)")
        } else {
            format!("{pg:.3} (± {se:.3}, binomial standard error)")
        };
        let _ = writeln!(
            o,
            "  P(glassy at {} {u}) = P(R_c ≤ {} {u}) {}{told}",
            r(q),
            r(q),
            if pg > 0.0 && pg < 1.0 { "= " } else { "" }
        );
    }
    if p.failed_draws > 0 {
        let _ = writeln!(
            o,
            "  {} of {} draws failed: left out of the band, counted as not glassy in P; the first: {}",
            p.failed_draws,
            p.draws,
            p.first_failure.as_deref().unwrap_or("")
        );
    }
    if !p.variance_shares.is_empty() {
        let _ = writeln!(
            o,
            "  share of the variance of log10 R_c each input explains (first order):"
        );
        let mut total = 0.0;
        for s in &p.variance_shares {
            let _ = writeln!(o, "    {:<48} {:>5.2}", s.input, s.share);
            if s.share.is_finite() {
                total += s.share;
            }
        }
        if p.variance_shares.len() > 1 {
            let _ = writeln!(
                o,
                "    {:<48} {:>5.2}",
                "(the rest: inputs acting together, bin noise)",
                (1.0 - total).max(0.0)
            );
        }
        if p.log10_critical_rate_sd > 0.0 {
            let _ = writeln!(
                o,
                "  a better measurement of the input with the largest share narrows the band most"
            );
        }
    }
    o
}
