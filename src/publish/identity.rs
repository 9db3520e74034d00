//! Topic ids that outlive a fit: after matching tonight's topics to the
//! published model's ([`crate::evaluate::drift`]), a matched topic inherits
//! its predecessor's id and every other topic gets a fresh id from the run
//! root's counter; predecessors left without a successor retire.

use crate::evaluate::drift::Drift;

/// The ids of a new model's topics.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Identities {
    /// The id of each new topic, by index.
    pub ids: Vec<u32>,
    /// The predecessor id of each new topic (`None` for a new topic).
    pub predecessors: Vec<Option<u32>>,
    /// Ids of the published topics no new topic took over, increasing.
    pub retired: Vec<u32>,
    /// The counter's value after the fresh ids were handed out.
    pub next_id: u32,
}

/// Gives ids to the new topics of `drift`: a predecessor's id when matched
/// (`old_ids` are the published model's ids by index), else the next fresh
/// id from `next_id`, in index order.
// `old_ids[i]`: a drift's old indices are topics of the published model,
// whose ids list has one entry per topic (checked when the model loads).
#[allow(clippy::indexing_slicing)]
pub fn assign_ids(drift: &Drift, old_ids: &[u32], next_id: u32) -> Identities {
    let mut next = next_id;
    let mut ids = Vec::with_capacity(drift.topics.len());
    let mut predecessors = Vec::with_capacity(drift.topics.len());
    for topic in &drift.topics {
        match topic.predecessor_index {
            Some(old_index) => {
                ids.push(old_ids[old_index]);
                predecessors.push(Some(old_ids[old_index]));
            }
            None => {
                ids.push(next);
                predecessors.push(None);
                next += 1;
            }
        }
    }
    let mut retired: Vec<u32> = drift
        .unmatched_old
        .iter()
        .map(|&old_index| old_ids[old_index])
        .collect();
    retired.sort_unstable();
    Identities {
        ids,
        predecessors,
        retired,
        next_id: next,
    }
}

/// Ids for the first model under a root: fresh ids from the counter.
pub fn first_ids(n_topics: usize, next_id: u32) -> Identities {
    Identities {
        ids: (next_id..next_id + n_topics as u32).collect(),
        predecessors: vec![None; n_topics],
        retired: Vec::new(),
        next_id: next_id + n_topics as u32,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::evaluate::drift::TopicDrift;

    fn topic(index: usize, predecessor_index: Option<usize>) -> TopicDrift {
        TopicDrift {
            index,
            predecessor_index,
            distance: Some(0.1),
            prevalence_before: None,
            prevalence_after: 0.5,
            top_words: Vec::new(),
            words_gained: Vec::new(),
            words_lost: Vec::new(),
        }
    }

    #[test]
    fn matched_topics_inherit_and_the_rest_get_ids_never_used() {
        // Source: common practice (persistent identifiers: never reuse one).
        let drift = Drift {
            threshold: 0.5,
            topics: vec![
                topic(0, Some(2)),
                topic(1, None),
                topic(2, Some(0)),
                topic(3, None),
            ],
            unmatched_old: vec![1],
        };
        let identities = assign_ids(&drift, &[40, 41, 42], 57);
        assert_eq!(identities.ids, vec![42, 57, 40, 58]);
        assert_eq!(identities.predecessors, vec![Some(42), None, Some(40), None]);
        assert_eq!(identities.retired, vec![41]);
        assert_eq!(identities.next_id, 59);
        assert_eq!(first_ids(3, 5).ids, vec![5, 6, 7]);
    }
}
