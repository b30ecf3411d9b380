//! The fit record's words as types: its status, the method that made it and where its probability
//! came from. Each prints and serialises as the word it always was, and compares equal to that word,
//! so the JSON and the text output are unchanged.

use std::fmt;

macro_rules! word_enum {
    ($(#[$m:meta])* $name:ident { $($(#[$vm:meta])* $v:ident => $s:literal),+ $(,)? }) => {
        $(#[$m])*
        #[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
        pub enum $name {
            $($(#[$vm])* $v),+
        }

        impl $name {
            pub const ALL: &'static [$name] = &[$($name::$v),+];

            /// The word the record prints.
            pub fn as_str(self) -> &'static str {
                match self {
                    $($name::$v => $s),+
                }
            }
        }

        impl fmt::Display for $name {
            fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
                f.write_str(self.as_str())
            }
        }

        impl serde::Serialize for $name {
            fn serialize<S: serde::Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
                s.serialize_str(self.as_str())
            }
        }

        impl PartialEq<&str> for $name {
            fn eq(&self, other: &&str) -> bool {
                self.as_str() == *other
            }
        }
    };
}

word_enum!(
    /// How the fit came out.
    FitStatus {
        /// A usable orbit.
        Ok => "ok",
        /// An orbit that fits the positions, but they leave its elements open: the population model,
        /// not the data, narrowed e ± σ or chose between solutions that fit nearly alike
        /// (`FitResult::mark_undetermined`). P is still the posterior.
        Undetermined => "undetermined",
        /// An orbit that does not fit the positions well (the reasons are in `poor_fit`).
        PoorFit => "poor-fit",
        /// No orbit (the reason is in `error`).
        Failed => "failed",
    }
);

impl FitStatus {
    /// An orbit that fits the positions (ok or undetermined): one to rank, alert on and follow.
    pub fn usable(self) -> bool {
        matches!(self, FitStatus::Ok | FitStatus::Undetermined)
    }

    /// The console's word for it, at most six characters (the status column).
    pub fn label(self) -> &'static str {
        match self {
            FitStatus::Ok => "ok",
            FitStatus::Undetermined => "model",
            FitStatus::PoorFit => "POOR",
            FitStatus::Failed => "FAIL",
        }
    }
}

word_enum!(
    /// What produced the orbit.
    FitMethod {
        LeastSquares => "least-squares",
        /// Ranging over distance and radial velocity: a one-night arc's quadrature, or grid ranging.
        Ranging => "ranging",
    }
);

word_enum!(
    /// Where P(unbound) came from.
    ProbabilitySource {
        /// No probability (a failed fit, or one too poor to score).
        NoProbability => "none",
        Linear => "linear",
        RangeProfile => "range-profile",
        ImportanceSampling => "importance-sampling",
        SystematicRanging => "systematic-ranging",
        ShortArcQuadrature => "short-arc-quadrature",
    }
);

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_word_serialises_prints_and_compares_as_itself() {
        let words = FitStatus::ALL
            .iter()
            .map(|k| (k.as_str(), serde_json::to_value(k).unwrap(), k.to_string()))
            .chain(
                FitMethod::ALL
                    .iter()
                    .map(|k| (k.as_str(), serde_json::to_value(k).unwrap(), k.to_string())),
            )
            .chain(
                ProbabilitySource::ALL
                    .iter()
                    .map(|k| (k.as_str(), serde_json::to_value(k).unwrap(), k.to_string())),
            );
        for (word, json, text) in words {
            assert_eq!(json, serde_json::Value::from(word));
            assert_eq!(text, word);
        }
        assert!(FitStatus::PoorFit == "poor-fit" && FitStatus::Ok != "failed");
    }
}
