//! One rank's share of a fit spread over the R ranks of a job (for example
//! an MPI job: the transport is the [`Link`] the caller hands in, so this
//! module does no I/O and knows nothing of MPI).
//!
//! The block grid of [`ShardedSampler`] (P shards of documents, P groups
//! of words, P blocks per epoch sharing no document and no word) is spread
//! over the ranks: rank r keeps the shards `r m .. (r + 1) m` (m = P / R)
//! and their assignments for the whole run, and samples only their blocks.
//! Word groups travel: after each epoch a rank hands the group its first
//! shard used to the previous rank of the ring and takes the group its last
//! shard uses next from the next rank (rows of the word-topic table, and
//! the word-major entries for the kernels that read them). After the P
//! epochs of a sweep every group is back at its home rank (group q with
//! shard q). The topic totals' changes are summed over the ranks at the end
//! of each epoch, as the threads of one process sum them, and every block
//! draws from its own random stream, so each rank computes exactly what the
//! single process computes for its blocks: the model is byte-identical to
//! the single-process fit with the same shards, for any R dividing P.
//!
//! Between sweeps a rank's state is current only for its own documents and
//! its home word groups. What reads more is computed in parts and combined
//! in a fixed order: the log-likelihood from every word's and document's
//! term gathered in word and document order (the same additions in the
//! same order as one process), the learned priors from integer histograms
//! merged across ranks. Before a posterior sample, a checkpoint or the end
//! of the run every rank gathers the whole state (`settle`).

use serde::Serialize;

use crate::fitting::fit::{self, SweepEngine};
use crate::fitting::priors::CountHistogram;
use crate::fitting::sampler::{self, EpochLink, ShardedSampler, Topic};
use crate::model::Model;

/// The transport between the ranks of a job, besides the ring and the
/// epoch sums of [`EpochLink`]. Gathers return every rank's values
/// concatenated in rank order, on every rank.
pub trait Link: EpochLink {
    /// This rank, from 0.
    fn rank(&self) -> usize;
    /// The number of ranks.
    fn ranks(&self) -> usize;
    fn all_gather_u16(&mut self, local: &[u16]) -> Vec<u16>;
    fn all_gather_u32(&mut self, local: &[u32]) -> Vec<u32>;
    fn all_gather_u64(&mut self, local: &[u64]) -> Vec<u64>;
    fn all_gather_f64(&mut self, local: &[f64]) -> Vec<f64>;
    /// The bytes this rank has sent so far.
    fn traffic(&self) -> Traffic;
}

/// Bytes one rank sent, by purpose. Collective operations count the payload
/// this rank hands over once per other rank (what an MPI library actually
/// moves depends on its algorithm).
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize)]
pub struct Traffic {
    /// Word groups passed around the ring (word-topic cells and word-major entries).
    pub ring_bytes: u64,
    /// Topic-total changes summed at the end of each epoch.
    pub totals_bytes: u64,
    /// Log-likelihood terms, histograms and whole-state gathers.
    pub gather_bytes: u64,
}

impl Traffic {
    /// All bytes sent.
    pub fn total(&self) -> u64 {
        self.ring_bytes + self.totals_bytes + self.gather_bytes
    }
}

/// Bytes one rank passes around the ring in one sweep, by the communication
/// model of ARCHITECTURE.md: each of the P word groups leaves each rank once
/// per sweep, so a rank sends the whole word-topic table (4 bytes a cell) and,
/// for the kernel that reads it, the whole word-major list (2 bytes a token).
/// Zero with one rank.
pub fn ring_bytes_per_sweep(model: &Model, sampler: &ShardedSampler, ranks: usize) -> u64 {
    if ranks <= 1 {
        return 0;
    }
    let cells = model.state.word_topic.cell_start(model.state.n_words) as u64;
    cells * 4 + sampler.word_list_len() as u64 * std::mem::size_of::<Topic>() as u64
}

/// Bytes one rank sends to sum the topic-total changes in one sweep: K
/// 8-byte changes per epoch, P epochs (payload, once per other rank).
pub fn totals_bytes_per_sweep(n_topics: usize, n_shards: usize, ranks: usize) -> u64 {
    (n_topics * 8 * n_shards * ranks.saturating_sub(1)) as u64
}

/// The sweeps of one rank of a distributed fit.
pub struct RankEngine<'l, L: Link> {
    sampler: ShardedSampler,
    link: &'l mut L,
    checkpoint_every: Option<u64>,
    sweeps: u64,
}

impl<'l, L: Link> RankEngine<'l, L> {
    /// The engine of `link`'s rank for `model` (the same model, whole, on
    /// every rank), with checkpoints every `checkpoint_every` sweeps.
    pub fn new(model: &Model, link: &'l mut L, checkpoint_every: Option<u64>) -> Result<Self, String> {
        let Some(mut sampler) = ShardedSampler::new(
            &model.corpus,
            model.schedule.shards as usize,
            model.schedule.sampler,
        ) else {
            return Err(
                "the reference sampler does not run on the block grid, so it cannot be spread over ranks; choose --sampler exact, metropolis or sparse"
                    .to_string(),
            );
        };
        sampler.set_ring(link.rank(), link.ranks())?;
        Ok(RankEngine {
            sampler,
            link,
            checkpoint_every,
            sweeps: 0,
        })
    }

    /// The sampler (for the communication model's predictions).
    pub fn sampler(&self) -> &ShardedSampler {
        &self.sampler
    }

    /// Sweeps run by this engine.
    pub fn sweeps(&self) -> u64 {
        self.sweeps
    }

    /// The link.
    pub fn link(&mut self) -> &mut L {
        self.link
    }

    /// Makes every rank's copy of the state whole: each rank's documents'
    /// assignments and home word groups' rows, gathered in rank order
    /// (which is corpus order and word order).
    fn gather_state(&mut self, model: &mut Model) {
        let tokens = self.sampler.own_tokens();
        let assignments = self.link.all_gather_u16(&model.state.assignments[tokens]);
        assert_eq!(
            assignments.len(),
            model.state.assignments.len(),
            "every rank's tokens"
        );
        model.state.assignments = assignments;
        let words = self.sampler.home_words();
        let cells = self.link.all_gather_u32(model.state.word_topic.cells(words));
        let table = model.state.word_topic.cells_mut(0..model.state.n_words);
        assert_eq!(cells.len(), table.len(), "every rank's word rows");
        table.copy_from_slice(&cells);
    }
}

/// Writes histograms as `[pairs, count, items, count, items, ...]` each.
fn encode_histograms(histograms: &[CountHistogram], out: &mut Vec<u64>) {
    for histogram in histograms {
        out.push(histogram.pairs().len() as u64);
        for &(count, items) in histogram.pairs() {
            out.extend([u64::from(count), items]);
        }
    }
}

/// Merges `ranks` runs of `per_rank` encoded histograms each into `per_rank` histograms.
fn decode_merged(encoded: &[u64], ranks: usize, per_rank: usize) -> Vec<CountHistogram> {
    let mut pairs: Vec<Vec<(u32, u64)>> = vec![Vec::new(); per_rank];
    let mut at = 0usize;
    for _ in 0..ranks {
        for merged in pairs.iter_mut() {
            let len = encoded[at] as usize;
            at += 1;
            for pair in encoded[at..at + 2 * len].chunks_exact(2) {
                merged.push((pair[0] as u32, pair[1]));
            }
            at += 2 * len;
        }
    }
    assert_eq!(at, encoded.len(), "histograms decode whole");
    pairs.into_iter().map(CountHistogram::from_pairs).collect()
}

impl<L: Link> SweepEngine for RankEngine<'_, L> {
    fn sweep(&mut self, model: &mut Model) {
        let link: &mut dyn EpochLink = self.link;
        self.sampler.sweep_linked(
            &mut model.state,
            &model.corpus,
            &model.priors,
            model.seed,
            model.iterations_done + 1,
            Some(link),
        );
        self.sweeps += 1;
    }

    fn doc_topic_histograms(&mut self, model: &Model) -> Vec<CountHistogram> {
        let local = fit::doc_topic_histograms(&model.state, &model.corpus, self.sampler.own_docs());
        let mut encoded = Vec::new();
        encode_histograms(&local, &mut encoded);
        let gathered = self.link.all_gather_u64(&encoded);
        decode_merged(&gathered, self.link.ranks(), model.state.n_topics)
    }

    fn word_topic_histogram(&mut self, model: &Model) -> CountHistogram {
        let local = fit::word_topic_histogram(&model.state, self.sampler.home_words());
        let mut encoded = Vec::new();
        encode_histograms(std::slice::from_ref(&local), &mut encoded);
        let gathered = self.link.all_gather_u64(&encoded);
        decode_merged(&gathered, self.link.ranks(), 1).remove(0)
    }

    fn log_likelihood(&mut self, model: &Model) -> f64 {
        let (per_word, per_doc) = sampler::log_likelihood_terms(
            &model.state,
            &model.corpus,
            &model.priors,
            self.sampler.home_words(),
            self.sampler.own_docs(),
        );
        let per_word = self.link.all_gather_f64(&per_word);
        let per_doc = self.link.all_gather_f64(&per_doc);
        assert_eq!(per_word.len(), model.state.n_words, "every word's term");
        assert_eq!(per_doc.len(), model.corpus.n_docs(), "every document's term");
        sampler::log_likelihood_from_terms(&model.state, &model.priors, &per_word, &per_doc).total()
    }

    fn settle(&mut self, model: &mut Model, done: u64, whole: bool) {
        let checkpoint_due = self
            .checkpoint_every
            .is_some_and(|every| done.is_multiple_of(every) && done < model.target);
        if (whole || checkpoint_due) && self.link.ranks() > 1 {
            self.gather_state(model);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::any::Any;
    use std::sync::{Arc, Barrier, Mutex};

    /// R threads standing in for R ranks: what a rank hands over is put in
    /// its slot between two barriers, and read from the others' slots.
    struct Hub {
        barrier: Barrier,
        slots: Mutex<Vec<Option<Box<dyn Any + Send>>>>,
    }

    struct ThreadLink {
        hub: Arc<Hub>,
        rank: usize,
        ranks: usize,
        traffic: Traffic,
    }

    impl ThreadLink {
        /// Every rank's value, in rank order.
        fn exchange<T: Clone + Send + 'static>(&mut self, value: T) -> Vec<T> {
            self.hub.slots.lock().unwrap()[self.rank] = Some(Box::new(value));
            self.hub.barrier.wait();
            let all = self
                .hub
                .slots
                .lock()
                .unwrap()
                .iter()
                .map(|slot| slot.as_ref().unwrap().downcast_ref::<T>().unwrap().clone())
                .collect();
            self.hub.barrier.wait();
            all
        }

        fn gather<T: Copy + Send + 'static>(&mut self, local: &[T]) -> Vec<T> {
            self.traffic.gather_bytes += (std::mem::size_of_val(local) * (self.ranks - 1)) as u64;
            self.exchange(local.to_vec()).concat()
        }
    }

    impl EpochLink for ThreadLink {
        fn sum_changes(&mut self, changes: &mut [i64]) {
            self.traffic.totals_bytes += (changes.len() * 8 * (self.ranks - 1)) as u64;
            let all = self.exchange(changes.to_vec());
            for (index, change) in changes.iter_mut().enumerate() {
                *change = all.iter().map(|part| part[index]).sum();
            }
        }

        fn pass_group(
            &mut self,
            cells: &[u32],
            entries: &[Topic],
            cells_in: &mut [u32],
            entries_in: &mut [Topic],
        ) {
            self.traffic.ring_bytes += (cells.len() * 4 + entries.len() * 2) as u64;
            let all = self.exchange((cells.to_vec(), entries.to_vec()));
            let (next_cells, next_entries) = &all[(self.rank + 1) % self.ranks];
            cells_in.copy_from_slice(next_cells);
            entries_in.copy_from_slice(next_entries);
        }
    }

    impl Link for ThreadLink {
        fn rank(&self) -> usize {
            self.rank
        }
        fn ranks(&self) -> usize {
            self.ranks
        }
        fn all_gather_u16(&mut self, local: &[u16]) -> Vec<u16> {
            self.gather(local)
        }
        fn all_gather_u32(&mut self, local: &[u32]) -> Vec<u32> {
            self.gather(local)
        }
        fn all_gather_u64(&mut self, local: &[u64]) -> Vec<u64> {
            self.gather(local)
        }
        fn all_gather_f64(&mut self, local: &[f64]) -> Vec<f64> {
            self.gather(local)
        }
        fn traffic(&self) -> Traffic {
            self.traffic
        }
    }

    /// A fit with learned priors, a trace at every sweep and three samples.
    fn settings(sampler: crate::fitting::schedule::SamplerChoice) -> fit::FitSettings {
        let mut settings = fit::FitSettings::fixed(6, 12, 0.1, 0.05, 17);
        settings.alpha = fit::PriorSpec::Learn;
        settings.beta = fit::PriorSpec::Learn;
        settings.burn_in = 4;
        settings.learn_every = 2;
        settings.trace_every = 1;
        settings.samples = 3;
        settings.lag = 2;
        settings.shards = Some(4);
        settings.sampler = sampler;
        settings
    }

    /// The model file's bytes and every rank's traffic after fitting on `ranks` threads.
    fn fit_on_ranks(model: &Model, ranks: usize) -> (Vec<u8>, Vec<Traffic>, u64) {
        let hub = Arc::new(Hub {
            barrier: Barrier::new(ranks),
            slots: Mutex::new((0..ranks).map(|_| None).collect()),
        });
        let outcomes: Vec<(Vec<u8>, Traffic, u64)> = std::thread::scope(|scope| {
            let handles: Vec<_> = (0..ranks)
                .map(|rank| {
                    let hub = Arc::clone(&hub);
                    let mut model = model.clone();
                    scope.spawn(move || {
                        let mut link = ThreadLink {
                            hub,
                            rank,
                            ranks,
                            traffic: Traffic::default(),
                        };
                        let mut engine = RankEngine::new(&model, &mut link, None).unwrap();
                        let predicted = ring_bytes_per_sweep(&model, engine.sampler(), ranks);
                        fit::run_with_engine(&mut model, &mut engine, &mut |_| {}, &mut |_| {
                            std::ops::ControlFlow::Continue(())
                        })
                        .unwrap();
                        let bytes = model.encode(std::path::Path::new("model.bin")).unwrap();
                        (bytes, link.traffic(), predicted)
                    })
                })
                .collect();
            handles.into_iter().map(|handle| handle.join().unwrap()).collect()
        });
        let predicted = outcomes[0].2;
        let bytes = outcomes[0].0.clone();
        for outcome in &outcomes {
            assert_eq!(outcome.0, bytes, "every rank ends with the same model");
        }
        (
            bytes,
            outcomes.iter().map(|outcome| outcome.1).collect(),
            predicted,
        )
    }

    #[test]
    fn ranks_fit_the_single_process_model_byte_for_byte() {
        // Source: common practice — the determinism contract of ARCHITECTURE.md
        // (same seed and shards, same model file, whatever the rank count).
        use crate::fitting::schedule::SamplerChoice;
        let corpus = crate::testbed::synthetic::bars(60, 40, 0.5, 3).corpus;
        for choice in [
            SamplerChoice::Exact,
            SamplerChoice::Metropolis,
            SamplerChoice::Sparse,
        ] {
            let start = fit::start(corpus.clone(), &settings(choice)).unwrap();
            let mut single = start.clone();
            fit::run_to_target(&mut single, &mut |_| {}, &mut |_| {
                std::ops::ControlFlow::Continue(())
            })
            .unwrap();
            let single = single.encode(std::path::Path::new("model.bin")).unwrap();
            // The communication model of ARCHITECTURE.md from the word
            // counts alone: a dense row of K cells, or next_pow2(2 n_w)
            // cells when that is at most K / 2; 4 bytes a cell, plus 2 bytes
            // a token of word-major entries for the MH kernel.
            let cells: u64 = sampler::word_token_counts(&corpus)
                .iter()
                .map(|&tokens| {
                    let sparse = (2 * tokens.max(1)).next_power_of_two();
                    if 2 * sparse <= 6 { sparse } else { 6 }
                })
                .sum();
            let entries = if choice == SamplerChoice::Metropolis {
                2 * corpus.n_tokens() as u64
            } else {
                0
            };
            for ranks in [1, 2, 4] {
                let (bytes, traffic, predicted) = fit_on_ranks(&start, ranks);
                assert_eq!(predicted, if ranks == 1 { 0 } else { 4 * cells + entries });
                assert!(
                    bytes == single,
                    "{choice:?} on {ranks} ranks differs from one process"
                );
                for rank in traffic {
                    // The ring moves exactly what the communication model says.
                    assert_eq!(rank.ring_bytes, predicted * 12, "{choice:?}, {ranks} ranks");
                    assert_eq!(rank.totals_bytes, totals_bytes_per_sweep(6, 4, ranks) * 12);
                }
            }
        }
    }

    #[test]
    fn a_grid_that_ranks_cannot_share_is_refused() {
        // Source: common practice — P must be a multiple of R.
        let corpus = crate::testbed::synthetic::bars(60, 40, 0.5, 3).corpus;
        let mut settings = settings(crate::fitting::schedule::SamplerChoice::Exact);
        settings.shards = Some(3);
        let model = fit::start(corpus, &settings).unwrap();
        let hub = Arc::new(Hub {
            barrier: Barrier::new(2),
            slots: Mutex::new(vec![None, None]),
        });
        let mut link = ThreadLink {
            hub,
            rank: 0,
            ranks: 2,
            traffic: Traffic::default(),
        };
        let error = RankEngine::new(&model, &mut link, None).err().unwrap();
        assert!(
            error.contains("3 shards") && error.contains("multiple of 2"),
            "{error}"
        );
    }

    #[test]
    fn merged_histograms_equal_the_histogram_of_all_items() {
        // Source: common practice — a histogram of a union is the sum of the
        // histograms of its parts.
        let parts = [vec![1u32, 1, 3, 7], vec![3u32, 3, 1, 0, 9000], vec![]];
        let encoded: Vec<u64> = parts
            .iter()
            .flat_map(|part| {
                let mut out = Vec::new();
                encode_histograms(&[CountHistogram::from_counts(part.iter().copied())], &mut out);
                out
            })
            .collect();
        let merged = decode_merged(&encoded, parts.len(), 1).remove(0);
        let all = CountHistogram::from_counts(parts.iter().flatten().copied());
        assert_eq!(merged, all);
        assert_eq!(merged.items_with_count(3), 3);
        assert_eq!(merged.items_with_count(1), 3);
    }
}
