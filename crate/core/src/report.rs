//! The one rule for numbers in JSON reports.
//!
//! Every report the core prints (the run summary, comparisons, audits,
//! inspections) is a `#[derive(Serialize)]` struct. A number that is not
//! finite (NaN for "no data", an infinite bound) becomes JSON `null`, never a
//! string or a crash: [`Num`] is that number, [`Pair`] an interval of two of
//! them, [`nums`] and [`pair`] build them.

use serde::{Serialize, Serializer};

/// A number that serialises as itself when finite and as `null` otherwise.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Num(pub f64);

impl Serialize for Num {
    fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        if self.0.is_finite() {
            s.serialize_f64(self.0)
        } else {
            s.serialize_none()
        }
    }
}

impl From<f64> for Num {
    fn from(x: f64) -> Self {
        Num(x)
    }
}

/// An interval `[low, high]`, or `null` when there is none.
pub type Pair = Option<[Num; 2]>;

/// The interval of an optional pair of numbers.
pub fn pair(p: Option<(f64, f64)>) -> Pair {
    p.map(|(a, b)| [Num(a), Num(b)])
}

/// A list of numbers, each finite or `null`.
pub fn nums(xs: &[f64]) -> Vec<Num> {
    xs.iter().map(|&x| Num(x)).collect()
}

/// Serialises a report to JSON text (reports hold only serialisable data).
pub fn to_value<T: Serialize>(report: &T) -> serde_json::Value {
    serde_json::to_value(report).expect("a report serialises")
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn non_finite_numbers_become_null() {
        // JSON has no NaN or infinity (RFC 8259, Section 6).
        let v =
            to_value(&(Num(1.5), Num(f64::NAN), Num(f64::INFINITY), pair(Some((0.0, f64::NEG_INFINITY)))));
        assert_eq!(v.to_string(), "[1.5,null,null,[0.0,null]]");
        assert_eq!(to_value(&pair(None)).to_string(), "null");
    }
}
