//! Scoring saved models: fold-in, held-out estimators on real fits, and the
//! choice of K.

use rand::SeedableRng;
use rand_xoshiro::Xoshiro256PlusPlus;
use themata::evaluate::compare::jensen_shannon_distance;
use themata::evaluate::heldout::FoldInSettings;
use themata::evaluate::k_search::{KSearchSettings, run_k_search};
use themata::evaluate::score::{self, EncodedDocument, Method, ScoreSettings};
use themata::fitting::fit::{FitSettings, PriorSpec, fit};
use themata::testbed::synthetic;

fn sparse_topics(n_topics: usize, n_words: usize, seed: u64) -> Vec<Vec<f64>> {
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);
    (0..n_topics)
        .map(|_| synthetic::dirichlet(&vec![0.05; n_words], &mut rng))
        .collect()
}

fn names(n_words: usize) -> Vec<String> {
    (0..n_words).map(|w| format!("w{w}")).collect()
}

#[test]
fn fold_in_of_a_training_document_recovers_its_shares() {
    // Source: common practice — with the topics fixed at the fitted ones,
    // folding in a training document targets the same posterior over its
    // shares that training sampled. Documents of 200 tokens: the share
    // estimates carry a standard deviation near sqrt(0.25/200) = 0.035, so a
    // Jensen-Shannon distance of 0.1 between the two mixtures leaves room for
    // the chains' noise while a misplaced document is at 0.3 or more.
    let data = synthetic::from_topics(
        sparse_topics(4, 200, 1),
        &[0.3; 4],
        &vec![200; 300],
        names(200),
        2,
    );
    let (model, _) = fit(
        data.corpus.clone(),
        &FitSettings::fixed(4, 200, 0.3, 0.05, 3),
        &mut |_| {},
    )
    .unwrap();
    let weights = score::TopicWeights::of(&model);
    let fold = FoldInSettings {
        burn_in: 50,
        samples: 20,
        lag: 5,
    };
    let mut worst: f64 = 0.0;
    for doc_idx in 0..30 {
        let doc = EncodedDocument {
            id: format!("d{doc_idx}"),
            tokens: model.corpus.doc_tokens(doc_idx).to_vec(),
            unknown_tokens: 0,
        };
        let mut rng = score::document_rng(9, doc_idx);
        let placed = score::place(&model, &weights, &doc, &fold, &mut rng).unwrap();
        let trained = model.doc_topic_shares(doc_idx);
        worst = worst.max(jensen_shannon_distance(&placed.shares, &trained));
    }
    eprintln!("fold-in vs training shares: worst JS distance {worst:.4}");
    assert!(worst < 0.1, "worst distance {worst}");
}

#[test]
fn estimators_agree_on_a_fitted_model() {
    // Source: Wallach, Murray, Salakhutdinov & Mimno 2009 — document
    // completion estimates log p(second half | first half); the left-to-right
    // estimator gives log p(w) of a whole document, so
    // log p(w) - log p(first half) estimates the same quantity. Completion
    // plugs in a point estimate of theta, which lowers it slightly; the
    // measured gap is a few hundredths of a nat per token, so 0.1 nats per
    // token separates agreement from a broken estimator (a model with the
    // topics of another corpus scores about 1 nat per token worse).
    let topics = sparse_topics(5, 100, 4);
    let data = synthetic::from_topics(topics, &[0.2; 5], &vec![60; 400], names(100), 5);
    let (model, _) = fit(
        data.corpus.clone(),
        &FitSettings::fixed(5, 200, 0.2, 0.05, 6),
        &mut |_| {},
    )
    .unwrap();
    let held = synthetic::from_topics(sparse_topics(5, 100, 4), &[0.2; 5], &vec![60; 60], names(100), 7);
    let whole = score::corpus_documents(&held.corpus);
    let first_halves: Vec<EncodedDocument> = whole
        .iter()
        .map(|d| EncodedDocument {
            tokens: d.tokens.iter().step_by(2).copied().collect(),
            ..d.clone()
        })
        .collect();
    let ltr = ScoreSettings {
        method: Method::LeftToRight,
        particles: 10,
        ..ScoreSettings::default()
    };
    let completion = score::score_heldout(&model, &whole, &ScoreSettings::default()).unwrap();
    let ltr_whole = score::score_heldout(&model, &whole, &ltr).unwrap();
    let ltr_half = score::score_heldout(&model, &first_halves, &ltr).unwrap();
    let chain_rule = ltr_whole.log_likelihood - ltr_half.log_likelihood;
    let per_token_gap = (chain_rule - completion.log_likelihood) / completion.tokens_scored as f64;
    eprintln!(
        "completion {:.1}, left-to-right chain rule {:.1}, gap {per_token_gap:.4} nats/token",
        completion.log_likelihood, chain_rule
    );
    assert!(per_token_gap.abs() < 0.1, "gap {per_token_gap} nats per token");
}

#[test]
fn sweep_recommends_the_generating_number_of_topics() {
    // Source: common practice — held-out perplexity falls steeply until K
    // reaches the generating number of topics and then flattens. Data from 8
    // sparse topics; candidates 4, 8, 16. Rule (src/evaluate/k_search.rs): the smallest K
    // within 2% of the lowest mean held-out perplexity. The margin is safe:
    // measured, K = 4 merges topics and is about 60% worse than K = 8, and
    // K = 16 is about 2% worse than K = 8 (spare topics split true ones), so
    // K = 8 has the lowest perplexity; 16 would have to beat it by more than
    // 2% to win, the opposite of what the extra topics do.
    let data = synthetic::from_topics(
        sparse_topics(8, 400, 10),
        &[0.1; 8],
        &vec![60; 800],
        names(400),
        11,
    );
    let settings = KSearchSettings {
        topics: vec![4, 8, 16],
        seeds: vec![1, 2],
        holdout: 0.2,
        fit: FitSettings {
            burn_in: 100,
            alpha: PriorSpec::Learn,
            beta: PriorSpec::Learn,
            // One shard, as when this test was written: at K = 8 about one
            // chain in eight stays in a mode with two topics merged (measured
            // over seeds 1-8: one stuck chain with 1 shard, seed 3, and one
            // with 2 shards, seed 1; perplexity 68-71 against 62.1-62.7), and
            // with 2 shards seed 1 is that chain. The rule, not the luck of a
            // chain, is what this test checks.
            shards: Some(1),
            ..FitSettings::fixed(8, 300, 0.1, 0.01, 1)
        },
    };
    let finished = std::sync::Mutex::new(Vec::new());
    let report = run_k_search(&data.corpus, &settings, &|done| {
        finished.lock().unwrap().push(done)
    })
    .unwrap();
    // Source: issue 11, item 10 — one progress report per finished fit.
    let mut finished = finished.into_inner().unwrap();
    finished.sort_by_key(|done| done.done);
    assert_eq!(
        finished.iter().map(|d| d.done).collect::<Vec<_>>(),
        [1, 2, 3, 4, 5, 6]
    );
    assert!(finished.iter().all(|d| d.total == 6));
    for row in &report.rows {
        eprintln!(
            "K={} perplexity {:.2} (sd {:.2}) npmi {:.3} stability {:?}",
            row.topics, row.heldout_perplexity, row.perplexity_sd, row.npmi, row.stability
        );
    }
    // The recommendation (8) lies inside the candidates, so no edge note.
    assert_eq!(report.recommended_at_edge, None);
    assert_eq!(report.recommended_topics, 8, "{report:#?}");
    // Stability: the true K gives nearly the same topics for both seeds.
    let eight = report.rows.iter().find(|r| r.topics == 8).unwrap();
    assert!(eight.stability.unwrap() < 0.2, "{eight:?}");
}
