//! Posterior summaries: medians with 16/84 and 2.5/97.5 percentiles, and upper limits.

use serde::{Deserialize, Serialize};

/// A marginal posterior summary. `upper95` is set (and the quantity should be quoted as an upper
/// limit) when the posterior piles up at the lower prior bound.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Interval {
    pub median: f64,
    pub p16: f64,
    pub p84: f64,
    pub p2_5: f64,
    pub p97_5: f64,
    pub upper95: Option<f64>,
}

/// The q-quantile (0 ≤ q ≤ 1) of sorted values, by linear interpolation between order statistics.
#[must_use]
pub fn quantile(sorted: &[f64], q: f64) -> f64 {
    if sorted.is_empty() {
        return f64::NAN;
    }
    let position = q.clamp(0.0, 1.0) * (sorted.len() - 1) as f64;
    let below = position.floor() as usize;
    let above = (below + 1).min(sorted.len() - 1);
    let w = position - below as f64;
    sorted[below] * (1.0 - w) + sorted[above] * w
}

/// Summarises the finite values (None when there are none).
#[must_use]
pub fn interval(values: impl IntoIterator<Item = f64>) -> Option<Interval> {
    let mut sorted: Vec<f64> = values.into_iter().filter(|v| v.is_finite()).collect();
    if sorted.is_empty() {
        return None;
    }
    sorted.sort_by(f64::total_cmp);
    Some(Interval {
        median: quantile(&sorted, 0.5),
        p16: quantile(&sorted, 0.16),
        p84: quantile(&sorted, 0.84),
        p2_5: quantile(&sorted, 0.025),
        p97_5: quantile(&sorted, 0.975),
        upper95: None,
    })
}

/// Fraction of the prior range above its lower bound within which a 2.5th percentile counts as
/// "piled up at the bound" (common practice; no published standard).
pub const LOWER_BOUND_FRACTION: f64 = 0.05;

/// True when the sampled coordinate's posterior piles up at the lower bound of its prior:
/// its 2.5th percentile lies within [`LOWER_BOUND_FRACTION`] of the range above the bound.
#[must_use]
pub fn piles_at_lower_bound(coordinates: &[f64], lower: f64, upper: f64) -> bool {
    let mut sorted: Vec<f64> = coordinates
        .iter()
        .copied()
        .filter(|v| v.is_finite())
        .collect();
    if sorted.is_empty() {
        return false;
    }
    sorted.sort_by(f64::total_cmp);
    quantile(&sorted, 0.025) - lower < LOWER_BOUND_FRACTION * (upper - lower)
}

/// Words for a difference in BIC (or AIC) between a model and the best one, on the scale of
/// Kass & Raftery (1995) for 2 ln B: below 2 "tie", 2–6 "positive", 6–10 "strong", above 10
/// "very strong" evidence for the best model. Common practice, not a law: the thresholds are
/// conventions.
#[must_use]
pub fn evidence_words(delta: f64) -> &'static str {
    match delta {
        d if !d.is_finite() => "-",
        d if d <= 0.0 => "best",
        d if d < 2.0 => "tie",
        d if d < 6.0 => "positive against",
        d if d < 10.0 => "strong against",
        _ => "very strong against",
    }
}

/// The clearly preferred entry by an information criterion: the lowest value, but only when
/// there is a runner-up and it is at least 2 above it (otherwise None: a tie, or nothing to
/// compare); `criterion` picks BIC or AIC.
#[must_use]
pub fn clearly_preferred<T>(items: &[T], criterion: impl Fn(&T) -> f64) -> Option<&T> {
    let mut sorted: Vec<&T> = items.iter().filter(|t| criterion(t).is_finite()).collect();
    sorted.sort_by(|a, b| criterion(a).total_cmp(&criterion(b)));
    match sorted.as_slice() {
        [best, second, ..] if criterion(second) - criterion(best) >= 2.0 => Some(best),
        _ => None,
    }
}

/// One sentence on the models' ranking by an information criterion (`criterion` picks BIC or
/// AIC; `name` names an entry): the clearly preferred one, or which tie within 2 of the lowest
/// and how far behind, in [`evidence_words`], the others are — a tie among velocity-dependent
/// models with a constant far behind is still a verdict on the constant. None with fewer than two
/// entries to compare.
#[must_use]
pub fn ranking_sentence<T>(
    items: &[T],
    name: impl Fn(&T) -> String,
    criterion: impl Fn(&T) -> f64,
) -> Option<String> {
    let mut sorted: Vec<&T> = items.iter().filter(|t| criterion(t).is_finite()).collect();
    if sorted.len() < 2 {
        return None;
    }
    sorted.sort_by(|a, b| criterion(a).total_cmp(&criterion(b)));
    let best = criterion(sorted[0]);
    let (tied, behind): (Vec<&T>, Vec<&T>) = sorted.iter().partition(|t| criterion(t) - best < 2.0);
    let lead = if tied.len() == 1 {
        format!("{} preferred", name(tied[0]))
    } else {
        let names: Vec<String> = tied.iter().map(|t| name(t)).collect();
        format!("{} tie (within 2 of the lowest)", names.join(", "))
    };
    let rest: Vec<String> = behind
        .iter()
        .map(|t| {
            let delta = criterion(t) - best;
            format!("{} {delta:.1} behind ({})", name(t), evidence_words(delta))
        })
        .collect();
    Some(if rest.is_empty() {
        lead
    } else {
        format!("{lead}; {}", rest.join(", "))
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn quantiles_interpolate_like_numpy() {
        // Reference: numpy.percentile (linear method) of [1, 2, 3, 4]: 16th → 1.48, 50th → 2.5.
        let values = [4.0, 1.0, 3.0, 2.0];
        let s = interval(values).expect("values");
        assert!((s.p16 - 1.48).abs() < 1e-12);
        assert!((s.median - 2.5).abs() < 1e-12);
        assert!(interval([f64::NAN]).is_none());
    }

    #[test]
    fn lower_bound_pile_up_is_detected() {
        let flat: Vec<f64> = (0..1000)
            .map(|i| -2.0 + 2.0 * f64::from(i) / 1000.0)
            .collect();
        assert!(piles_at_lower_bound(&flat, -2.0, 2.0));
        let peaked: Vec<f64> = (0..1000)
            .map(|i| 0.4 + 0.2 * f64::from(i) / 1000.0)
            .collect();
        assert!(!piles_at_lower_bound(&peaked, -2.0, 2.0));
    }

    #[test]
    fn evidence_words_follow_the_stated_scale() {
        // Kass & Raftery (1995) thresholds on the 2 ln B (ΔBIC) scale: 2, 6, 10.
        assert_eq!(evidence_words(0.0), "best");
        assert_eq!(evidence_words(0.24), "tie");
        assert_eq!(evidence_words(3.0), "positive against");
        assert_eq!(evidence_words(7.0), "strong against");
        assert_eq!(evidence_words(12.0), "very strong against");
        let bic = [10.0, 10.24, 15.0];
        assert!(clearly_preferred(&bic, |b| *b).is_none());
        let bic = [10.0, 13.0];
        assert_eq!(clearly_preferred(&bic, |b| *b), Some(&10.0));
        assert!(clearly_preferred(&[10.0], |b| *b).is_none());
    }

    #[test]
    fn the_ranking_sentence_names_the_tie_and_the_models_behind() {
        let bic = [("constant", 16.2), ("fall-off", 10.0), ("yukawa", 10.1)];
        let sentence = ranking_sentence(&bic, |b| b.0.to_string(), |b| b.1).expect("a ranking");
        assert_eq!(
            sentence,
            "fall-off, yukawa tie (within 2 of the lowest); constant 6.2 behind (strong against)"
        );
        let bic = [("constant", 13.0), ("fall-off", 10.0)];
        let sentence = ranking_sentence(&bic, |b| b.0.to_string(), |b| b.1).expect("a ranking");
        assert_eq!(
            sentence,
            "fall-off preferred; constant 3.0 behind (positive against)"
        );
        assert!(ranking_sentence(&[("constant", 1.0)], |b| b.0.to_string(), |b| b.1).is_none());
    }
}
