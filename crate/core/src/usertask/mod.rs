//! The user's own tasks: a model written as formulas ([`formula`], task
//! kind `"formula"`) and a finite model written as a table of transitions
//! ([`table`], kind `"table"`). They sit above [`crate::task`] and
//! [`crate::reward`] (a formula task is compiled with the reward formula
//! language; a table task runs as a [`crate::task::finite::FiniteTask`]),
//! so neither of those depends on them.

pub mod formula;
pub mod table;
