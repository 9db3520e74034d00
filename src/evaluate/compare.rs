//! Comparing distributions and partitions: Jensen-Shannon distance between
//! topics, minimum-cost matching of one model's topics to another's
//! (Hungarian method), and normalised mutual information between two
//! labellings of the same documents (and of a model's top topics against
//! its documents' labels).

use pathfinding::kuhn_munkres::kuhn_munkres_min;
use pathfinding::matrix::Matrix;
use serde::Serialize;

use crate::model::Model;

/// Jensen-Shannon distance (the square root of the divergence, natural log)
/// between two distributions over the same support. Between 0 and sqrt(ln 2).
pub fn jensen_shannon_distance(p: &[f64], q: &[f64]) -> f64 {
    let mut divergence = 0.0;
    for (&a, &b) in p.iter().zip(q) {
        let mid = 0.5 * (a + b);
        if a > 0.0 {
            divergence += 0.5 * a * (a / mid).ln();
        }
        if b > 0.0 {
            divergence += 0.5 * b * (b / mid).ln();
        }
    }
    divergence.max(0.0).sqrt()
}

/// Scale that turns distances into the integer costs the matcher needs.
const COST_SCALE: f64 = 1e12;

/// Matches every row to a distinct column minimising the total cost
/// (Kuhn-Munkres). Needs `costs.len() <= costs[0].len()`. Returns the column
/// of each row.
pub fn min_cost_matching(costs: &[Vec<f64>]) -> Vec<usize> {
    if costs.is_empty() {
        return Vec::new();
    }
    let scaled: Vec<Vec<i64>> = costs
        .iter()
        .map(|row| {
            row.iter()
                .map(|&cost| (cost * COST_SCALE).round() as i64)
                .collect()
        })
        .collect();
    let matrix = Matrix::from_rows(scaled).expect("rows of equal length");
    kuhn_munkres_min(&matrix).1
}

/// One matched pair of topics.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct TopicMatch {
    /// Topic index in the first model.
    pub left: usize,
    /// Topic index in the second model.
    pub right: usize,
    /// Jensen-Shannon distance between their word distributions.
    pub distance: f64,
}

/// Matches the topics of `left` to those of `right` (each a word
/// distribution per topic) by minimum total Jensen-Shannon distance.
/// `left` must not have more topics than `right`.
pub fn match_topics(left: &[Vec<f64>], right: &[Vec<f64>]) -> Vec<TopicMatch> {
    let costs: Vec<Vec<f64>> = left
        .iter()
        .map(|p| right.iter().map(|q| jensen_shannon_distance(p, q)).collect())
        .collect();
    min_cost_matching(&costs)
        .into_iter()
        .enumerate()
        .map(|(row, column)| TopicMatch {
            left: row,
            right: column,
            distance: costs[row][column],
        })
        .collect()
}

/// Normalised mutual information between two labellings of the same items,
/// normalised by the arithmetic mean of the two entropies (natural log).
/// Returns 1 when both labellings have a single class.
pub fn normalized_mutual_information(a: &[usize], b: &[usize]) -> f64 {
    assert_eq!(a.len(), b.len(), "labellings of different lengths");
    let n = a.len() as f64;
    if a.is_empty() {
        return 0.0;
    }
    let classes_a = a.iter().max().map_or(0, |m| m + 1);
    let classes_b = b.iter().max().map_or(0, |m| m + 1);
    let mut joint = vec![0usize; classes_a * classes_b];
    let mut count_a = vec![0usize; classes_a];
    let mut count_b = vec![0usize; classes_b];
    for (&x, &y) in a.iter().zip(b) {
        joint[x * classes_b + y] += 1;
        count_a[x] += 1;
        count_b[y] += 1;
    }
    let entropy = |counts: &[usize]| -> f64 {
        counts
            .iter()
            .filter(|&&c| c > 0)
            .map(|&c| {
                let p = c as f64 / n;
                -p * p.ln()
            })
            .sum()
    };
    let (h_a, h_b) = (entropy(&count_a), entropy(&count_b));
    let mut mutual = 0.0;
    for x in 0..classes_a {
        for y in 0..classes_b {
            let c = joint[x * classes_b + y];
            if c > 0 {
                let p_xy = c as f64 / n;
                mutual += p_xy * (p_xy * n * n / (count_a[x] as f64 * count_b[y] as f64)).ln();
            }
        }
    }
    let mean = 0.5 * (h_a + h_b);
    if mean <= 0.0 {
        1.0
    } else {
        (mutual / mean).clamp(0.0, 1.0)
    }
}

/// How well documents' top topics agree with their labels.
#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
pub struct LabelAgreement {
    /// Normalised mutual information (arithmetic-mean normalisation).
    pub nmi: f64,
    /// Labelled documents compared.
    pub documents: usize,
    /// Distinct labels among them.
    pub labels: usize,
}

/// Index of the largest share (first on ties).
pub fn top_topic(shares: &[f64]) -> usize {
    let mut best = 0;
    for (idx, &share) in shares.iter().enumerate() {
        if share > shares[best] {
            best = idx;
        }
    }
    best
}

/// NMI between each labelled training document's top topic and its label;
/// `None` when no document has a label.
pub fn label_agreement(model: &Model) -> Option<LabelAgreement> {
    let documents = &model.corpus.documents;
    let mut names: Vec<&str> = documents.iter().filter_map(|d| d.label.as_deref()).collect();
    names.sort_unstable();
    names.dedup();
    if names.is_empty() {
        return None;
    }
    let (labels, topics): (Vec<usize>, Vec<usize>) = documents
        .iter()
        .enumerate()
        .filter_map(|(doc_idx, doc)| {
            let label = doc.label.as_deref()?;
            let label_idx = names.binary_search(&label).ok()?;
            Some((label_idx, top_topic(&model.doc_topic_shares(doc_idx))))
        })
        .unzip();
    Some(LabelAgreement {
        nmi: normalized_mutual_information(&labels, &topics),
        documents: labels.len(),
        labels: names.len(),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn jensen_shannon_matches_scipy() {
        // Source: ../shared/METHODS.md section 8, scipy jensenshannon([1,0],[.5,.5]) natural log.
        let d = jensen_shannon_distance(&[1.0, 0.0], &[0.5, 0.5]);
        assert!((d - 0.46450140402245893).abs() < 1e-12, "{d}");
        // Source: common practice — identical distributions are at distance 0,
        // disjoint ones at sqrt(ln 2).
        assert_eq!(jensen_shannon_distance(&[0.2, 0.8], &[0.2, 0.8]), 0.0);
        let far = jensen_shannon_distance(&[1.0, 0.0], &[0.0, 1.0]);
        assert!((far - 2f64.ln().sqrt()).abs() < 1e-12);
    }

    #[test]
    fn hungarian_matches_scipy_assignment() {
        // Source: ../shared/METHODS.md section 8, scipy linear_sum_assignment
        // of [[4,1,3],[2,0,5],[3,2,2]]: columns [1,0,2], cost 5.
        let costs = vec![vec![4.0, 1.0, 3.0], vec![2.0, 0.0, 5.0], vec![3.0, 2.0, 2.0]];
        let columns = min_cost_matching(&costs);
        assert_eq!(columns, vec![1, 0, 2]);
        let total: f64 = columns.iter().enumerate().map(|(r, &c)| costs[r][c]).sum();
        assert_eq!(total, 5.0);
    }

    #[test]
    fn nmi_of_relabelled_and_independent_partitions() {
        // Source: Strehl & Ghosh 2002 (JMLR 3) — NMI is 1 for identical
        // partitions up to renaming of classes, 0 for independent ones.
        assert!((normalized_mutual_information(&[0, 0, 1, 1], &[1, 1, 0, 0]) - 1.0).abs() < 1e-12);
        assert!(normalized_mutual_information(&[0, 0, 1, 1], &[0, 1, 0, 1]).abs() < 1e-12);
    }

    #[test]
    fn nmi_of_a_small_worked_case() {
        // Source: hand computation from the definition (common practice):
        // a = [0,0,0,1,1,1], b = [0,0,1,1,2,2]. H(a) = ln 2, H(b) = ln 3,
        // I = (1/3) ln 2 + (1/3) ln 2 ... = sum p_xy ln(p_xy/(p_x p_y))
        //   = 2*(1/3)ln((1/3)/((1/2)(1/3))) + 2*(1/6)ln((1/6)/((1/2)(1/3)))
        //   = (2/3) ln 2; NMI = I / ((ln 2 + ln 3)/2).
        let expected = (2.0 / 3.0) * 2f64.ln() / (0.5 * (2f64.ln() + 3f64.ln()));
        let got = normalized_mutual_information(&[0, 0, 0, 1, 1, 1], &[0, 0, 1, 1, 2, 2]);
        assert!((got - expected).abs() < 1e-12, "{got} vs {expected}");
    }
}
