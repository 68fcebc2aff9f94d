//! Corrections for many tests at once: Holm's step-down adjustment of
//! p-values, [`holm`].

/// Holm's (1979) step-down adjusted p-values ("A simple sequentially
/// rejective multiple test procedure", Scandinavian Journal of Statistics
/// 6(2), 65–70), returned in the input order.
///
/// With the m finite p-values sorted, p(1) ≤ … ≤ p(m), the adjusted value
/// of p(i) is max over j ≤ i of min(1, (m − j + 1) p(j)); rejecting where
/// the adjusted p ≤ α controls the family-wise error rate at α for any
/// dependence between the tests, and rejects at least what Bonferroni
/// rejects. This is R's `p.adjust(p, "holm")` and statsmodels'
/// `multipletests(p, method="holm")`.
///
/// Non-finite entries (NaN: a test whose p is undefined) are left out of
/// the family, so m counts only the finite ones, and come back NaN. Values
/// are not checked to lie in [0, 1]; any above 1 adjust to 1. Tied p-values
/// get the same adjusted value. An empty slice gives an empty vector.
pub fn holm(p: &[f64]) -> Vec<f64> {
    let mut order: Vec<usize> = (0..p.len()).filter(|&i| p[i].is_finite()).collect();
    order.sort_by(|&i, &j| p[i].total_cmp(&p[j]));
    let m = order.len();
    let mut out = vec![f64::NAN; p.len()];
    let mut running = 0.0_f64;
    for (rank, &i) in order.iter().enumerate() {
        let factor = (m - rank) as f64;
        running = running.max((factor * p[i]).min(1.0));
        out[i] = running;
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn small_cases_by_hand() {
        // Derived from the definition.
        assert!(holm(&[]).is_empty());
        assert_eq!(holm(&[0.03]), vec![0.03]);
        // Sorted 0.01, 0.02, 0.04 → 3·0.01, max(0.03, 2·0.02), max(0.04, 0.04).
        let got = holm(&[0.04, 0.01, 0.02]);
        let want = [0.04, 0.03, 0.04];
        for (g, w) in got.iter().zip(want) {
            assert!((g - w).abs() < 1e-15, "{got:?}");
        }
        // Capped at 1 and monotone in the sorted order.
        assert_eq!(holm(&[0.6, 0.5]), vec![1.0, 1.0]);
    }

    #[test]
    fn nan_is_left_out_of_the_family() {
        // The documented contract: m counts only the finite p.
        let got = holm(&[f64::NAN, 0.01, 0.04, f64::INFINITY]);
        assert!(got[0].is_nan() && got[3].is_nan());
        assert!((got[1] - 0.02).abs() < 1e-15 && (got[2] - 0.04).abs() < 1e-15, "{got:?}");
    }

    #[test]
    fn ties_share_one_value() {
        // Definition: the running maximum gives tied p the same adjusted p.
        let got = holm(&[0.01, 0.01, 0.5]);
        assert_eq!(got[0], got[1]);
        assert!((got[0] - 0.03).abs() < 1e-15);
    }
}
