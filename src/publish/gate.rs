//! The quality gate between a finished run and publication: conditions
//! from the config's `[gate]` section, each checked against the run's
//! figures, with a verdict and one readable paragraph saying why.

use serde::{Deserialize, Serialize};

use crate::settings::GateOptions;

/// The figures of a run that the gate looks at.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct GateFigures {
    /// Share of the new topics matched to a published topic; `None` when
    /// nothing is published yet.
    pub matched_share: Option<f64>,
    /// Held-out perplexity of the new model on tonight's held-out documents.
    pub perplexity: Option<f64>,
    /// Held-out perplexity of the published model on the same documents.
    pub published_perplexity: Option<f64>,
    /// Mean NPMI of the new topics on the training documents.
    pub mean_npmi: Option<f64>,
}

/// One condition of the gate and how the run fared.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct GateCondition {
    /// The config key, e.g. `min_matched_share`.
    pub condition: String,
    /// The limit set in the config.
    pub limit: f64,
    /// The run's figure (`None` when it does not apply, e.g. on the first run).
    pub value: Option<f64>,
    pub passed: bool,
    /// Why a condition that does not apply was passed.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub note: Option<String>,
}

/// The gate's verdict.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct GateOutcome {
    pub passed: bool,
    pub conditions: Vec<GateCondition>,
    /// One paragraph a person can read: why the run failed, or that it passed.
    pub reason: String,
}

fn percent(value: f64) -> String {
    format!("{:.1}%", 100.0 * value)
}

/// Checks `figures` against the conditions set in `gate`.
pub fn evaluate(gate: &GateOptions, figures: &GateFigures) -> GateOutcome {
    let mut conditions = Vec::new();
    let mut failures: Vec<String> = Vec::new();
    if let Some(limit) = gate.min_matched_share {
        let (passed, note) = match figures.matched_share {
            Some(share) if share < limit => {
                failures.push(format!(
                    "only {} of the new topics matched a published topic, below the least share of {} set by gate.min_matched_share",
                    percent(share),
                    percent(limit)
                ));
                (false, None)
            }
            Some(_) => (true, None),
            None => (true, Some("nothing published yet to match against".to_string())),
        };
        conditions.push(GateCondition {
            condition: "min_matched_share".to_string(),
            limit,
            value: figures.matched_share,
            passed,
            note,
        });
    }
    if let Some(limit) = gate.max_perplexity_rise {
        let rise = match (figures.perplexity, figures.published_perplexity) {
            (Some(new), Some(old)) if old > 0.0 => Some(new / old - 1.0),
            _ => None,
        };
        let (passed, note) = match rise {
            Some(rise) if rise > limit => {
                failures.push(format!(
                    "held-out perplexity rose by {} against the published model (from {:.2} to {:.2} on tonight's held-out documents), above the largest rise of {} set by gate.max_perplexity_rise",
                    percent(rise),
                    figures.published_perplexity.unwrap_or(f64::NAN),
                    figures.perplexity.unwrap_or(f64::NAN),
                    percent(limit)
                ));
                (false, None)
            }
            Some(_) => (true, None),
            None => (
                true,
                Some("no published model, or no held-out perplexity for both models".to_string()),
            ),
        };
        conditions.push(GateCondition {
            condition: "max_perplexity_rise".to_string(),
            limit,
            value: rise,
            passed,
            note,
        });
    }
    if let Some(limit) = gate.min_mean_npmi {
        let passed = figures.mean_npmi.is_some_and(|npmi| npmi >= limit);
        if !passed {
            failures.push(match figures.mean_npmi {
                Some(npmi) => format!(
                    "the topics' mean NPMI is {npmi:.3}, below the least of {limit:.3} set by gate.min_mean_npmi"
                ),
                None => "the topics' mean NPMI could not be computed, and gate.min_mean_npmi needs it".to_string(),
            });
        }
        conditions.push(GateCondition {
            condition: "min_mean_npmi".to_string(),
            limit,
            value: figures.mean_npmi,
            passed,
            note: None,
        });
    }
    let passed = failures.is_empty();
    let reason = if passed {
        if conditions.is_empty() {
            "No gate conditions are set; the run is published.".to_string()
        } else {
            format!(
                "The run met all {} gate conditions and is published.",
                conditions.len()
            )
        }
    } else {
        let mut text = String::from("The run was not published: ");
        text.push_str(&failures.join("; and "));
        text.push('.');
        text
    };
    GateOutcome {
        passed,
        conditions,
        reason,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn each_condition_fails_with_its_reason_and_missing_figures_are_noted() {
        // Source: common practice — a gate fails closed on what it can
        // measure, says which limit failed, and does not fail a first run for
        // lack of a predecessor.
        let gate = GateOptions {
            min_matched_share: Some(0.9),
            max_perplexity_rise: Some(0.05),
            min_mean_npmi: Some(0.1),
        };
        let good = GateFigures {
            matched_share: Some(0.95),
            perplexity: Some(102.0),
            published_perplexity: Some(100.0),
            mean_npmi: Some(0.2),
        };
        let outcome = evaluate(&gate, &good);
        assert!(outcome.passed, "{}", outcome.reason);
        assert_eq!(outcome.conditions.len(), 3);
        let bad = GateFigures {
            matched_share: Some(0.5),
            perplexity: Some(110.0),
            ..good
        };
        let outcome = evaluate(&gate, &bad);
        assert!(!outcome.passed);
        assert!(
            outcome.reason.contains("only 50.0% of the new topics matched"),
            "{}",
            outcome.reason
        );
        assert!(outcome.reason.contains("rose by 10.0%"), "{}", outcome.reason);
        assert!(!outcome.reason.contains("NPMI"), "{}", outcome.reason);
        let first_run = GateFigures {
            matched_share: None,
            published_perplexity: None,
            ..good
        };
        let outcome = evaluate(&gate, &first_run);
        assert!(outcome.passed);
        assert!(outcome.conditions[0].note.is_some() && outcome.conditions[1].note.is_some());
        assert!(evaluate(&GateOptions::default(), &bad).passed);
    }
}
