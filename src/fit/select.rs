//! Model choice per terrain (docs/method.md, Calibration): the lowest validation error, preferring fewer
//! parameters unless a larger family is at least [`BETTER_FRACTION`] better. The error compared
//! is the median relative translation error on the held-out windows. Families are visited by
//! parameter count; a larger family replaces the current choice only when its error is at most
//! (1 - 5 %) of the current one, and among families of one size the lower error comes first.

use crate::kinematics::Family;

/// How much better (relative) a family with more parameters must validate to be preferred.
pub const BETTER_FRACTION: f64 = 0.05;

/// A family that may be chosen: it converged and validated.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Candidate {
    pub family: Family,
    pub params: usize,
    /// Median relative translation error on validation windows.
    pub error: f64,
}

/// The chosen family and why, in plain words.
#[derive(Debug, Clone, PartialEq)]
pub struct Choice {
    pub family: Family,
    pub reason: String,
}

fn pct(x: f64) -> String {
    format!("{:.1} %", 100.0 * x)
}

/// Chooses among `candidates`; `None` when there are none.
pub fn choose(candidates: &[Candidate]) -> Option<Choice> {
    let mut order: Vec<&Candidate> = candidates.iter().filter(|c| c.error.is_finite()).collect();
    order.sort_by(|a, b| a.params.cmp(&b.params).then(a.error.total_cmp(&b.error)).then(a.family.cmp(&b.family)));
    let mut chosen = *order.first()?;
    let mut beaten: Option<&Candidate> = None;
    for c in order.iter().skip(1) {
        if c.params > chosen.params && c.error <= (1.0 - BETTER_FRACTION) * chosen.error {
            beaten = Some(chosen);
            chosen = c;
        }
    }
    let mut reason = format!("median translation error {}", pct(chosen.error));
    if let Some(b) = beaten {
        let gain = 1.0 - chosen.error / b.error;
        reason += &format!(", {:.0} % better than {} ({})", 100.0 * gain, b.family, pct(b.error));
    }
    let best_larger = order.iter().filter(|c| c.params > chosen.params).min_by(|a, b| a.error.total_cmp(&b.error));
    if let Some(l) = best_larger {
        if l.error < chosen.error {
            let gain = 1.0 - l.error / chosen.error;
            reason += &format!(
                "; {} ({}) is only {:.1} % better, less than the {:.0} % that justifies more parameters",
                l.family,
                pct(l.error),
                100.0 * gain,
                100.0 * BETTER_FRACTION
            );
        } else {
            reason += "; no family with more parameters validates better";
        }
    }
    Some(Choice { family: chosen.family, reason })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn c(family: Family, params: usize, error: f64) -> Candidate {
        Candidate { family, params, error }
    }

    #[test]
    fn fewer_parameters_win_unless_five_percent_better() {
        let cands = [
            c(Family::Ideal, 0, 0.20),
            c(Family::ExtendedSymmetric, 2, 0.10),
            c(Family::Extended, 3, 0.097),
            c(Family::Linear, 6, 0.099),
        ];
        let choice = choose(&cands).expect("some");
        assert_eq!(choice.family, Family::ExtendedSymmetric);
        assert!(choice.reason.contains("50 % better than ideal"), "{}", choice.reason);
        assert!(choice.reason.contains("extended (9.7 %) is only 3.0 % better"), "{}", choice.reason);
    }

    #[test]
    fn a_larger_family_wins_at_five_percent() {
        let cands = [c(Family::ExtendedSymmetric, 2, 0.10), c(Family::Extended, 3, 0.094), c(Family::Icr, 3, 0.2)];
        assert_eq!(choose(&cands).map(|c| c.family), Some(Family::Extended));
        assert_eq!(choose(&[]), None);
    }
}
