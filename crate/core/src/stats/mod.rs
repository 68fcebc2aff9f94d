//! Statistics over seeds: summaries, intervals, tests of difference and
//! power.
//!
//! The pieces, all re-exported here:
//! - [`descriptive`]: [`mean`], [`variance`], [`sd`], [`quantile`] (type 7,
//!   R's default), [`median`], the interquartile mean [`iqm`].
//! - [`dist`]: the regularised incomplete beta function, Student t and
//!   standard normal CDFs and quantiles.
//! - [`interval`]: [`Summary`] / [`summarize`] (mean, sd, Student-t 95%
//!   interval) and [`mean_ci_t`].
//! - [`welch`](mod@welch): Welch's t-test, [`welch()`] → [`Welch`].
//! - [`bootstrap`]: percentile bootstrap intervals of the mean, of a
//!   difference of means and of the probability of improvement P(X > Y).
//! - [`power`]: how many seeds per group a comparison needs,
//!   [`seeds_needed`] → [`SeedsAdvice`].
//!
//! Conventions: nothing panics on empty or degenerate input; functions
//! return NaN or `None` as each documents. NaN values inside a sample are
//! the caller's to reject before calling (debug builds assert it where a
//! result would otherwise silently become NaN). Randomness comes only from
//! a caller-supplied [`crate::rng::Stream`].

pub mod bootstrap;
pub mod descriptive;
pub mod dist;
pub mod interval;
pub mod power;
pub mod welch;

pub use bootstrap::{
    bootstrap_ci, bootstrap_diff_ci, bootstrap_mean_ci, prob_improvement, prob_improvement_ci,
};
pub use descriptive::{iqm, mean, median, quantile, quantile_sorted, sd, variance};
pub use dist::{
    inc_beta, ln_beta, normal_cdf, normal_pdf, normal_quantile, normal_sf, t_cdf, t_pdf, t_quantile, t_sf,
};
pub use interval::{mean_ci_t, summarize, Summary};
pub use power::{
    seeds_needed, seeds_needed_at, SeedsAdvice, SeedsError, DEFAULT_ALPHA, DEFAULT_POWER, MAX_SEEDS,
};
pub use welch::{welch, Welch};
