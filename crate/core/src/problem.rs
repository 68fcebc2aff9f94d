//! The one shape of a "field: message" problem, shared by the config, the
//! learner setup, the tasks, the reward formula and results files: where
//! ([`Problem::path`], a field path such as `variants[1].learner.actor_step`,
//! relative to whatever the caller checked) and what is wrong. Callers that
//! check a nested object prefix the path with [`Problem::under`].

/// One problem: where and what.
#[derive(Clone, Debug, PartialEq, Eq, serde::Serialize)]
pub struct Problem {
    /// Path of the field (empty for the whole text).
    pub path: String,
    /// What is wrong.
    pub message: String,
}

impl Problem {
    /// A problem at `path`.
    pub fn new(path: impl Into<String>, message: impl Into<String>) -> Self {
        Problem { path: path.into(), message: message.into() }
    }

    /// The same problem seen from the object that holds this one at `prefix`.
    pub fn under(self, prefix: &str) -> Self {
        let path = match (prefix.is_empty(), self.path.is_empty()) {
            (true, _) => self.path,
            (false, true) => prefix.to_string(),
            (false, false) if self.path.starts_with('[') => format!("{prefix}{}", self.path),
            (false, false) => format!("{prefix}.{}", self.path),
        };
        Problem { path, message: self.message }
    }
}

impl std::fmt::Display for Problem {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        if self.path.is_empty() {
            write!(f, "{}", self.message)
        } else {
            write!(f, "{}: {}", self.path, self.message)
        }
    }
}

impl std::error::Error for Problem {}

impl From<crate::task::TaskError> for Problem {
    fn from(e: crate::task::TaskError) -> Self {
        match e {
            crate::task::TaskError::Invalid(path, message) => Problem { path, message },
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn paths_join_like_the_config_writes_them() {
        // The path syntax of the config's own messages (common practice, no source).
        assert_eq!(Problem::new("actor_step", "bad").under("base").to_string(), "base.actor_step: bad");
        assert_eq!(Problem::new("[2]", "bad").under("task.payments").to_string(), "task.payments[2]: bad");
        assert_eq!(Problem::new("", "bad").under("reward").to_string(), "reward: bad");
        assert_eq!(Problem::new("", "whole text").to_string(), "whole text");
    }
}
