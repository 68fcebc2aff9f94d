//! Reference checks of `critbox_core::stats` against outside sources:
//! R's printed Welch test on Student's sleep data, values derived from
//! Agarwal et al. (2021) and Colas, Sigaud & Oudeyer (2018), and check
//! values computed with SciPy 1.17.1 / NumPy 2.4.6 (pinned below, each with
//! the call that produced it). Plus simulations of bootstrap coverage with
//! fixed seeds and stated tolerances.
//!
//! Everything sits in `mod stats` so that `cargo test -p critbox-core stats`
//! selects these tests by name.

mod stats {
    use critbox_core::rng::{Purpose, Stream};
    use critbox_core::stats::*;

    /// |got − want| ≤ tol·|want|, with a message naming the case.
    fn close_rel(got: f64, want: f64, tol: f64, what: &str) {
        let err = ((got - want) / want).abs();
        assert!(err <= tol, "{what}: got {got:e}, want {want:e}, relative error {err:e} > {tol:e}");
    }

    /// |got − want| ≤ tol.
    fn close_abs(got: f64, want: f64, tol: f64, what: &str) {
        assert!((got - want).abs() <= tol, "{what}: got {got}, want {want} (tolerance {tol})");
    }

    /// Student (1908) sleep data as in R's `sleep` data set.
    const SLEEP_1: [f64; 10] = [0.7, -1.6, -0.2, -1.2, -0.1, 3.4, 3.7, 0.8, 0.0, 2.0];
    const SLEEP_2: [f64; 10] = [1.9, 0.8, 1.1, 0.1, -0.1, 4.4, 5.5, 1.6, 4.6, 3.4];

    #[test]
    fn welch_on_sleep_data_matches_r_printout() {
        // R: t.test(extra ~ group, data = sleep) prints t = -1.8608,
        // df = 17.776, p-value = 0.07939, 95 percent CI -3.3654832 0.2054832
        // (references.md, Statistics). Asserted to the printed precision: half a
        // unit in the last printed digit.
        let w = welch(&SLEEP_1, &SLEEP_2).expect("sleep data is not degenerate");
        close_abs(w.t, -1.8608, 0.5e-4, "t");
        close_abs(w.df, 17.776, 0.5e-3, "df");
        close_abs(w.p, 0.07939, 0.5e-5, "p");
        close_abs(w.ci95.0, -3.3655, 0.5e-4, "ci lo");
        close_abs(w.ci95.1, 0.2055, 0.5e-4, "ci hi");
        close_abs(w.diff, -1.58, 1e-12, "diff");
    }

    #[test]
    fn welch_on_sleep_data_matches_scipy_to_full_precision() {
        // SciPy 1.17.1: r = scipy.stats.ttest_ind(g1, g2, equal_var=False);
        // r.statistic, r.pvalue, r.df, r.confidence_interval(0.95).
        let w = welch(&SLEEP_1, &SLEEP_2).unwrap();
        close_rel(w.t, -1.8608134674868526, 1e-12, "t");
        close_rel(w.p, 0.0793941401873583, 1e-11, "p");
        close_rel(w.df, 17.776473516178488, 1e-12, "df");
        close_rel(w.ci95.0, -3.3654832307117104, 1e-11, "ci lo");
        close_rel(w.ci95.1, 0.20548323071171137, 1e-10, "ci hi");
    }

    #[test]
    fn iqm_and_probability_of_improvement_derived_examples() {
        // Agarwal et al. (2021), NeurIPS, Sec. 4, derived: IQM(1..8) trims
        // ⌊8/4⌋ = 2 from each end, mean(3, 4, 5, 6) = 4.5.
        let one_to_eight: Vec<f64> = (1..=8).map(f64::from).collect();
        assert_eq!(iqm(&one_to_eight), 4.5);
        // Same source, derived: x = [1, 2, 3], y = [2, 2, 4]: pairs with x > y:
        // (3, 2) twice = 2; ties: (2, 2) twice = 2·½ = 1; total 3 of 9 = 1/3.
        close_rel(prob_improvement(&[1.0, 2.0, 3.0], &[2.0, 2.0, 4.0]), 1.0 / 3.0, 1e-15, "P(X > Y)");
    }

    #[test]
    fn probability_of_improvement_is_mann_whitney_u_over_pairs() {
        // SciPy 1.17.1: scipy.stats.mannwhitneyu(x, y).statistic = 19.5 for the
        // data below (ties present); 19.5 / (7·5) = 0.5571428571428572.
        let x = [1.0, 3.0, 3.0, 5.0, 2.0, 8.0, 3.0];
        let y = [3.0, 0.5, 2.0, 3.0, 9.0];
        close_rel(prob_improvement(&x, &y), 19.5 / 35.0, 1e-15, "U / (nx ny)");
    }

    /// Ten made-up returns used for the descriptive checks.
    const D: [f64; 10] = [3.1, -0.4, 7.7, 2.2, 9.9, 5.0, 1.8, 4.4, 6.1, 0.3];

    #[test]
    fn descriptive_statistics_match_numpy_and_scipy() {
        // NumPy 2.4.6: np.mean(D) = 4.01, np.std(D, ddof=1) = 3.2661394132318766.
        close_rel(mean(&D), 4.01, 1e-15, "mean");
        close_rel(sd(&D), 3.2661394132318766, 1e-14, "sd");
        // NumPy 2.4.6: np.quantile(D, q) (method 'linear' = Hyndman & Fan type 7).
        for (q, want) in [
            (0.1, 0.23),
            (0.25, 1.9000000000000001),
            (0.5, 3.75),
            (0.9, 7.919999999999999),
            (0.97, 9.306000000000001),
        ] {
            close_rel(quantile(&D, q), want, 1e-14, &format!("quantile {q}"));
        }
        close_rel(median(&D), 3.75, 1e-15, "median");
        // SciPy 1.17.1: scipy.stats.trim_mean(D, 0.25) = 3.766666666666667 and,
        // with 12.5 appended (n = 11, trims 2 from each end), 4.328571428571428.
        close_rel(iqm(&D), 3.766666666666667, 1e-14, "iqm n=10");
        let mut d11 = D.to_vec();
        d11.push(12.5);
        close_rel(iqm(&d11), 4.328571428571428, 1e-14, "iqm n=11");
    }

    #[test]
    fn t_interval_of_the_mean_matches_scipy() {
        // SciPy 1.17.1: scipy.stats.t.interval(level, 9, loc=np.mean(D),
        // scale=scipy.stats.sem(D)).
        let s = summarize(&D);
        assert_eq!(s.n, 10);
        let (lo, hi) = s.ci95.unwrap();
        close_rel(lo, 1.6735446148816022, 1e-12, "95% lo");
        close_rel(hi, 6.346455385118397, 1e-12, "95% hi");
        let (lo, hi) = mean_ci_t(&D, 0.9).unwrap();
        close_rel(lo, 2.1166803609096068, 1e-12, "90% lo");
        close_rel(hi, 5.903319639090392, 1e-12, "90% hi");
    }

    #[test]
    fn t_quantiles_match_scipy() {
        // SciPy 1.17.1: scipy.stats.t.ppf(p, df); small and large df, both
        // tails, non-integer df.
        let cases = [
            (0.975, 1.0, 12.706204736174694),
            (0.975, 2.0, 4.302652729749462),
            (0.975, 9.0, 2.262157162798205),
            (0.025, 9.0, -2.2621571627982053),
            (0.975, 17.776, 2.102821310380221),
            (0.995, 3.5, 5.085702223091256),
            (1e-10, 5.0, -156.82559270889433),
            (0.9999, 30.0, 4.23398595727206),
            (0.975, 1000.0, 1.9623390808264083),
            (0.975, 1e6, 1.959966356814107),
            (0.05, 2.5, -2.5582186141359364),
            (0.8, 126.0, 0.8444832478718834),
            (0.3, 0.7, -0.835441155706963),
        ];
        for (p, df, want) in cases {
            close_rel(t_quantile(p, df), want, 1e-12, &format!("t.ppf({p}, {df})"));
        }
    }

    #[test]
    fn t_cdf_and_sf_match_scipy() {
        // SciPy 1.17.1: scipy.stats.t.cdf(t, df) and scipy.stats.t.sf(t, df).
        let cdf = [
            (-2.5, 3.0, 0.04385332350403278),
            (1.3, 12.0, 0.8909914144582429),
            (-40.0, 1.5, 0.0014898121954656225),
            (-8.0, 100.0, 1.1364324038640347e-12),
            (0.1, 50000.0, 0.539827636816497),
            (-3.0, 1e6, 0.0013499312707109),
            (-6.0, 20.3, 3.403533326433897e-06),
            (2.0, 4.0, 0.9419417382415922),
        ];
        for (t, df, want) in cdf {
            close_rel(t_cdf(t, df), want, 1e-12, &format!("t.cdf({t}, {df})"));
        }
        let sf = [
            (5.0, 4.0, 0.0037452169406372625),
            (2.0, 1e7, 0.02275014544592148),
            (30.0, 8.0, 8.26762837589488e-10),
        ];
        for (t, df, want) in sf {
            close_rel(t_sf(t, df), want, 1e-12, &format!("t.sf({t}, {df})"));
        }
    }

    #[test]
    fn normal_quantiles_and_cdf_match_scipy() {
        // SciPy 1.17.1: scipy.stats.norm.ppf(p) and scipy.stats.norm.cdf(z).
        for (p, want) in [
            (0.975, 1.959963984540054),
            (0.8, 0.8416212335729143),
            (1e-10, -6.361340902404056),
            (0.3, -0.5244005127080409),
            (1e-300, -37.0470962993612),
            (0.9999, 3.719016485455709),
        ] {
            close_rel(normal_quantile(p), want, 1e-14, &format!("norm.ppf({p})"));
        }
        for (z, want) in [
            (-1.96, 0.024997895148220435),
            (0.5, 0.6914624612740131),
            (-10.0, 7.61985302416047e-24),
            (-37.5, 4.605353009581954e-308),
            (3.0, 0.9986501019683699),
        ] {
            close_rel(normal_cdf(z), want, 1e-13, &format!("norm.cdf({z})"));
        }
    }

    #[test]
    fn incomplete_beta_matches_scipy() {
        // SciPy 1.17.1: scipy.special.betainc(a, b, x).
        for (a, b, x, want) in [
            (2.0, 3.0, 0.4, 0.5247999999999999),
            (0.5, 0.5, 0.2, 0.2951672353008665),
            (10.0, 0.5, 0.9, 0.15164090963470994),
            (0.1, 10.0, 0.01, 0.8244896709066988),
            (50.0, 60.0, 0.45, 0.4642352914306031),
            (200.0, 1.0, 0.999, 0.8186488294786356),
            (3.5, 7.25, 0.61, 0.972202531404702),
        ] {
            close_rel(inc_beta(a, b, x), want, 1e-12, &format!("betainc({a}, {b}, {x})"));
        }
    }

    /// Fraction of `trials` in which `interval` (given fresh data) covers `truth`.
    fn coverage(trials: usize, mut interval: impl FnMut() -> (f64, f64), truth: f64) -> f64 {
        let mut hits = 0usize;
        for _ in 0..trials {
            let (lo, hi) = interval();
            if lo <= truth && truth <= hi {
                hits += 1;
            }
        }
        hits as f64 / trials as f64
    }

    #[test]
    fn bootstrap_mean_interval_covers_near_nominal_at_n_30() {
        // Percentile bootstrap undercovers at small n: for normal data it acts
        // like a normal interval with the 1/n sd, so its coverage is about
        // P(|T_29| < 1.96·√(29/30)) = 0.936 at n = 30 (derived; SciPy 1.17.1
        // 2*t.cdf(1.959964*sqrt(29/30), 29) - 1 = 0.93617). 2000 trials have a
        // standard error of 0.0055; tolerance ±0.02 (3.6 SE). A 90% interval
        // (coverage ≈ 0.89) or a 99% one (≈ 0.98) would fail.
        let n = 30;
        let mut data = Stream::derive(2021, Purpose::Other, 0, 0);
        let mut boot = Stream::derive(2021, Purpose::Stats, 0, 0);
        let cov = coverage(
            2000,
            || {
                let xs: Vec<f64> = (0..n).map(|_| 3.0 + 2.0 * data.normal()).collect();
                bootstrap_mean_ci(&xs, 0.95, 1000, &mut boot).unwrap()
            },
            3.0,
        );
        assert!((cov - 0.936).abs() <= 0.02, "coverage {cov}");
    }

    #[test]
    fn bootstrap_difference_interval_covers_near_nominal_at_n_30() {
        // Same reasoning as the one-sample case; two samples of 30 with sds 2
        // and 1, true difference 0.5. Common practice (coverage simulation), no
        // published value: expect 0.93–0.95; 1000 trials (SE ≈ 0.007),
        // tolerance [0.915, 0.965].
        let n = 30;
        let mut data = Stream::derive(2022, Purpose::Other, 0, 0);
        let mut boot = Stream::derive(2022, Purpose::Stats, 0, 0);
        let cov = coverage(
            1000,
            || {
                let a: Vec<f64> = (0..n).map(|_| 0.5 + 2.0 * data.normal()).collect();
                let b: Vec<f64> = (0..n).map(|_| data.normal()).collect();
                bootstrap_diff_ci(&a, &b, 0.95, 1000, &mut boot).unwrap()
            },
            0.5,
        );
        assert!((0.915..=0.965).contains(&cov), "coverage {cov}");
    }

    #[test]
    fn probability_of_improvement_interval_covers_the_true_value() {
        // X ~ N(0.5, 1), Y ~ N(0, 1): P(X > Y) = Φ(0.5/√2) (exact: X − Y is
        // N(0.5, 2)). Coverage simulation, common practice, no published value:
        // 1000 trials at n = 30 (SE ≈ 0.007), tolerance [0.915, 0.975].
        let truth = normal_cdf(0.5 / 2f64.sqrt());
        let n = 30;
        let mut data = Stream::derive(2023, Purpose::Other, 0, 0);
        let mut boot = Stream::derive(2023, Purpose::Stats, 0, 0);
        let cov = coverage(
            1000,
            || {
                let x: Vec<f64> = (0..n).map(|_| 0.5 + data.normal()).collect();
                let y: Vec<f64> = (0..n).map(|_| data.normal()).collect();
                prob_improvement_ci(&x, &y, 0.95, 1000, &mut boot).unwrap()
            },
            truth,
        );
        assert!((0.915..=0.975).contains(&cov), "coverage {cov}");
    }

    #[test]
    fn seeds_advisor_normal_approximation_is_15_7_s2_over_eps2() {
        // Colas, Sigaud & Oudeyer (2018), arXiv 1806.08295: N ≈ 15.7 s²/ε² per
        // group at α = 0.05 two-sided, power 0.8, s² the mean of the two
        // variances. The constant is 2(z_0.975 + z_0.8)² = 15.6978… (SciPy
        // 1.17.1 norm.ppf values above), printed as 15.7.
        for &(sa, sb, eps) in &[(1.0, 1.0, 2.0), (1.0, 1.0, 1.0), (3.0, 1.0, 0.7), (50.0, 80.0, 10.0)] {
            let adv = seeds_needed(sa, sb, eps).unwrap();
            let s2 = 0.5 * (sa * sa + sb * sb);
            let constant = adv.normal_raw * eps * eps / s2;
            close_rel(constant, 2.0 * (1.959963984540054f64 + 0.8416212335729143).powi(2), 1e-13, "constant");
            close_abs(constant, 15.7, 0.05, "constant as printed");
            assert!(adv.welch >= adv.normal, "{adv:?}");
        }
    }

    #[test]
    fn seeds_advisor_t_iteration_matches_exact_power_for_equal_sds() {
        // With equal sds and equal groups, Welch df = 2N − 2 (Student's test),
        // and the exact power comes from the noncentral t. SciPy 1.17.1, smallest
        // N with power ≥ 0.8 where power(N) = nct.sf(tc, 2N−2, nc) +
        // nct.cdf(−tc, 2N−2, nc), nc = ε/√(2/N), tc = t.ppf(0.975, 2N−2):
        // ε = 2 → 6 (power 0.8764; N = 5 gives 0.7905), ε = 1 → 17, ε = 0.5 → 64,
        // ε = 0.2 → 394. The t-based iteration is an approximation of that
        // power; here it lands on the same N, above the normal answer.
        for &(eps, exact) in &[(2.0, 6usize), (1.0, 17), (0.5, 64), (0.2, 394)] {
            let adv = seeds_needed(1.0, 1.0, eps).unwrap();
            assert_eq!(adv.welch, exact, "epsilon {eps}: {adv:?}");
            assert!(adv.welch > adv.normal_raw.ceil() as usize, "epsilon {eps}: {adv:?}");
            close_rel(adv.welch_df, 2.0 * (exact as f64 - 1.0), 1e-12, "welch df");
        }
    }

    #[test]
    fn seeds_advisor_t_answer_is_slightly_larger_and_converges_to_normal() {
        // Colas et al. (2018): the t-based count exceeds the normal
        // approximation, by less and less (relatively) as ε shrinks; derived
        // from t quantiles falling to normal ones as df grows.
        let mut last_ratio = f64::INFINITY;
        for &eps in &[3.0, 1.5, 0.75, 0.3, 0.1] {
            let adv = seeds_needed(1.0, 2.0, eps).unwrap();
            let ratio = adv.welch as f64 / adv.normal_raw;
            assert!(ratio > 1.0, "epsilon {eps}: {adv:?}");
            assert!(ratio < last_ratio, "epsilon {eps}: ratio {ratio} not below {last_ratio}");
            last_ratio = ratio;
        }
        assert!(last_ratio < 1.01, "ratio at ε = 0.1 is {last_ratio}");
    }
}
