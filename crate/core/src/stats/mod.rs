//! Statistics over seeds: summaries, intervals, tests of difference,
//! corrections for many tests, tolerance intervals and power.
//!
//! The pieces, all re-exported here:
//! - [`descriptive`]: [`mean`], [`variance`], [`sd`], [`quantile`] (type 7,
//!   R's default), [`median`], the interquartile mean [`iqm`].
//! - [`dist`]: the regularised incomplete beta function, Student t and
//!   standard normal CDFs and quantiles (the t functions stay exact for
//!   |t| up to `f64::MAX`).
//! - [`gamma`]: the regularised incomplete gamma functions [`inc_gamma_p`],
//!   [`inc_gamma_q`] and their inverse [`inc_gamma_p_inv`]; the chi-square
//!   distribution [`chi2_cdf`], [`chi2_sf`], [`chi2_quantile`].
//! - [`noncentral`]: the noncentral t distribution [`nct_cdf`], [`nct_sf`]
//!   (Lenth's 1989 AS 243 series, summed from the Poisson mode as Benton &
//!   Krishnamoorthy 2003 do).
//! - [`interval`]: [`Summary`] / [`summarize`] (mean, sd, Student-t 95%
//!   interval) and [`mean_ci_t`].
//! - [`tolerance`]: the two-sided normal tolerance factor
//!   [`tolerance_factor`] (Howe 1969) and [`tolerance_interval90`], the range
//!   that holds 90% of seeds with 95% confidence.
//! - [`welch`](mod@welch): Welch's t-test, [`welch()`] → [`Welch`].
//! - [`multiple`]: Holm's (1979) step-down adjusted p-values, [`holm`].
//! - [`bootstrap`]: percentile bootstrap intervals of the mean, of a
//!   difference of means and of the probability of improvement P(X > Y).
//! - [`mann_whitney`]: Newcombe's (2006) Method 5 interval for P(X > Y),
//!   [`prob_improvement_interval`], which never has zero width.
//! - [`power`]: how many seeds per group a comparison needs. The power of
//!   the two-sided Welch test from the noncentral t, [`welch_power`], and
//!   the smallest N reaching a power, [`seeds_for_power`]; the older
//!   central-t advisor [`seeds_needed`] → [`SeedsAdvice`] remains.
//!
//! Conventions: nothing panics on empty or degenerate input; functions
//! return NaN or `None` as each documents. Summaries, spreads, intervals and
//! tests ([`variance`], [`sd`], [`summarize`], [`mean_ci_t`], [`welch()`],
//! [`tolerance_interval90`], [`prob_improvement_interval`]) are undefined
//! (NaN or `None`) when any input value is NaN or infinite; the order
//! statistics and the bootstrap still expect the caller to reject NaN
//! values. Randomness comes only from a caller-supplied
//! [`crate::rng::Stream`].

pub mod bootstrap;
pub mod descriptive;
pub mod dist;
pub mod gamma;
pub mod interval;
pub mod mann_whitney;
pub mod multiple;
pub mod noncentral;
pub mod power;
pub mod tolerance;
pub mod welch;

pub use bootstrap::{
    bootstrap_ci, bootstrap_diff_ci, bootstrap_mean_ci, prob_improvement, prob_improvement_ci,
};
pub use descriptive::{iqm, mean, median, quantile, quantile_sorted, sd, variance};
pub use dist::{
    inc_beta, ln_beta, normal_cdf, normal_pdf, normal_quantile, normal_sf, t_cdf, t_pdf, t_quantile, t_sf,
};
pub use gamma::{chi2_cdf, chi2_quantile, chi2_sf, inc_gamma_p, inc_gamma_p_inv, inc_gamma_q};
pub use interval::{mean_ci_t, summarize, Summary};
pub use mann_whitney::prob_improvement_interval;
pub use multiple::holm;
pub use noncentral::{nct_cdf, nct_sf};
pub use power::{
    seeds_for_power, seeds_needed, seeds_needed_at, welch_power, SeedsAdvice, SeedsError, DEFAULT_ALPHA,
    DEFAULT_POWER, MAX_SEEDS,
};
pub use tolerance::{tolerance_factor, tolerance_interval90};
pub use welch::{welch, Welch};
