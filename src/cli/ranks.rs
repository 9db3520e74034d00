//! Fitting across the ranks of an MPI job (`mpirun -np R themata fit ...`).
//!
//! Built only with the cargo feature `mpi`; the default build has the same
//! functions, which refuse to run under an MPI launcher (so that R copies
//! of a plain build never race to write one output folder) and otherwise
//! do nothing. Under a launcher, `join` initialises MPI once for the
//! process and keeps the communicator in a thread-local (only the main
//! thread talks MPI; the worker pool never does), so that `common::sample`
//! can run the sweeps as one rank's share of the job
//! (`fitting::distributed`) without every caller passing it along.

use super::Failure;

/// Environment variables by which MPI launchers tell a process it is one
/// rank of a job (Open MPI, PMI-based launchers such as MPICH's Hydra and
/// Slurm's srun, PMIx). Common practice: the names each launcher documents.
const LAUNCHER_VARIABLES: [&str; 3] = ["OMPI_COMM_WORLD_SIZE", "PMI_SIZE", "PMIX_RANK"];

/// Whether an MPI launcher started this process.
fn launched_by_mpi() -> bool {
    LAUNCHER_VARIABLES
        .iter()
        .any(|name| std::env::var_os(name).is_some())
}

/// This process's place in the job.
#[derive(Clone, Copy, Debug)]
pub struct Place {
    pub rank: usize,
    pub ranks: usize,
}

impl Place {
    /// Whether this rank writes outputs and prints (rank 0).
    pub fn is_root(&self) -> bool {
        self.rank == 0
    }
}

/// Runs a command as this process's part of the job: joins it (`None`
/// outside a launcher) and, if the command fails, stops the other ranks.
pub fn as_rank(command: impl FnOnce(Option<Place>) -> Result<(), Failure>) -> Result<(), Failure> {
    let result = command(join()?);
    if let Err(failure) = &result {
        abort_on(failure);
    }
    result
}

#[cfg(not(feature = "mpi"))]
mod imp {
    use super::*;
    use std::path::PathBuf;
    use themata::fitting::fit::FitTiming;
    use themata::model::Model;
    use themata::model::summary::RanksSummary;

    /// Refuses to run under an MPI launcher: this build has no MPI.
    pub fn join() -> Result<Option<Place>, Failure> {
        let ranks: Option<usize> = ["OMPI_COMM_WORLD_SIZE", "PMI_SIZE"]
            .iter()
            .find_map(|name| std::env::var(name).ok()?.parse().ok());
        if launched_by_mpi() && ranks != Some(1) {
            return Err(Failure::bad_input(anyhow::anyhow!(
                "this themata was built without MPI, so its ranks would each fit the whole model; build with `cargo build --release --features mpi` (needs an MPI library, e.g. Debian's libopenmpi-dev, openmpi-bin and libclang-dev)"
            )));
        }
        Ok(None)
    }

    /// Nothing to do without MPI.
    pub fn sample(
        _model: &mut Model,
        _threads: usize,
        _checkpoint: &Option<(u64, PathBuf)>,
        _quiet: bool,
    ) -> Option<Result<FitTiming, Failure>> {
        None
    }

    /// Nothing to report without MPI.
    pub fn summary() -> Option<RanksSummary> {
        None
    }

    /// Nothing to stop without MPI.
    pub fn abort_on(_failure: &Failure) {}

    /// Every core.
    pub fn default_threads() -> Option<usize> {
        None
    }

    /// Nothing to set without MPI: each command builds its own pool.
    pub fn use_threads(_threads: usize) {}
}

#[cfg(feature = "mpi")]
mod imp {
    use super::*;
    use std::cell::RefCell;
    use std::ops::ControlFlow;
    use std::path::PathBuf;

    use mpi::Count;
    use mpi::collective::SystemOperation;
    use mpi::datatype::{Equivalence, PartitionMut};
    use mpi::environment::Universe;
    use mpi::topology::SimpleCommunicator;
    use mpi::traits::*;
    use themata::fitting::distributed::{self, Link, RankEngine, Traffic};
    use themata::fitting::fit::{self, FitTiming};
    use themata::fitting::sampler::{EpochLink, Topic};
    use themata::model::Model;
    use themata::model::summary::RanksSummary;

    use crate::cli::common::checkpoint_if_due;
    use crate::cli::progress::SweepProgress;

    /// The job's communicator and what this rank sent.
    struct MpiLink {
        world: SimpleCommunicator,
        rank: usize,
        ranks: usize,
        traffic: Traffic,
        /// Seconds spent in the epoch-end exchanges (waiting for the
        /// slowest rank included).
        waiting: f64,
    }

    struct Job {
        // Dropped last: finalises MPI.
        _universe: Universe,
        link: MpiLink,
        summary: Option<RanksSummary>,
    }

    thread_local! {
        static JOB: RefCell<Option<Job>> = const { RefCell::new(None) };
    }

    impl MpiLink {
        fn gather<T: Equivalence + Copy + Default>(&mut self, local: &[T]) -> Vec<T> {
            self.traffic.gather_bytes += (std::mem::size_of_val(local) * (self.ranks - 1)) as u64;
            let count = Count::try_from(local.len()).expect("a gather part fits MPI's count");
            let mut counts = vec![0 as Count; self.ranks];
            self.world.all_gather_into(&count, &mut counts[..]);
            let mut displacements = Vec::with_capacity(self.ranks);
            let mut total: Count = 0;
            for &part in &counts {
                displacements.push(total);
                total = total.checked_add(part).expect("a gather fits MPI's count");
            }
            let mut out = vec![T::default(); total as usize];
            {
                let mut partition = PartitionMut::new(&mut out[..], counts, &displacements[..]);
                self.world.all_gather_varcount_into(local, &mut partition);
            }
            out
        }

        fn shift<T: Equivalence>(&mut self, send: &[T], receive: &mut [T]) {
            if send.is_empty() && receive.is_empty() {
                return;
            }
            let previous = self
                .world
                .process_at_rank(((self.rank + self.ranks - 1) % self.ranks) as i32);
            let next = self.world.process_at_rank(((self.rank + 1) % self.ranks) as i32);
            mpi::point_to_point::send_receive_into(send, &previous, receive, &next);
        }
    }

    impl EpochLink for MpiLink {
        fn sum_changes(&mut self, changes: &mut [i64]) {
            let started = std::time::Instant::now();
            self.traffic.totals_bytes += (changes.len() * 8 * (self.ranks - 1)) as u64;
            let local = changes.to_vec();
            self.world
                .all_reduce_into(&local[..], changes, SystemOperation::sum());
            self.waiting += started.elapsed().as_secs_f64();
        }

        fn pass_group(
            &mut self,
            cells: &[u32],
            entries: &[Topic],
            cells_in: &mut [u32],
            entries_in: &mut [Topic],
        ) {
            self.traffic.ring_bytes += (std::mem::size_of_val(cells) + std::mem::size_of_val(entries)) as u64;
            let started = std::time::Instant::now();
            self.shift(cells, cells_in);
            self.shift(entries, entries_in);
            self.waiting += started.elapsed().as_secs_f64();
        }
    }

    impl Link for MpiLink {
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

    /// Joins the MPI job this process was launched in (once), or `None`
    /// when no launcher started it.
    pub fn join() -> Result<Option<Place>, Failure> {
        if !launched_by_mpi() {
            return Ok(None);
        }
        if let Some(place) = JOB.with_borrow(|job| {
            job.as_ref().map(|job| Place {
                rank: job.link.rank,
                ranks: job.link.ranks,
            })
        }) {
            return Ok(Some(place));
        }
        let (universe, _) = mpi::initialize_with_threading(mpi::Threading::Funneled)
            .ok_or_else(|| Failure::system(anyhow::anyhow!("MPI could not be initialised")))?;
        let world = universe.world();
        let place = Place {
            rank: world.rank() as usize,
            ranks: world.size() as usize,
        };
        JOB.with_borrow_mut(|job| {
            *job = Some(Job {
                _universe: universe,
                link: MpiLink {
                    world,
                    rank: place.rank,
                    ranks: place.ranks,
                    traffic: Traffic::default(),
                    waiting: 0.0,
                },
                summary: None,
            })
        });
        Ok(Some(place))
    }

    /// Worker threads per rank when none are asked for: the cores shared
    /// among the ranks on this machine.
    pub fn default_threads() -> Option<usize> {
        let local: usize = std::env::var("OMPI_COMM_WORLD_LOCAL_SIZE")
            .or_else(|_| std::env::var("MPI_LOCALNRANKS"))
            .ok()?
            .parse()
            .ok()?;
        let cores = std::thread::available_parallelism().map_or(1, |n| n.get());
        Some((cores / local.max(1)).max(1))
    }

    /// Makes the global pool this rank's workers, `threads` of them. MPI is
    /// called from the main thread only, so a rank's sweeps run there with
    /// the global pool as their workers; it must be built before anything
    /// (reading the corpus, the random start) starts it with one worker per
    /// core, or each rank would take every core. Later calls change nothing.
    pub fn use_threads(threads: usize) {
        // Building fails only when the pool exists already: see `sample_on`.
        let _ = rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build_global();
    }

    /// Runs the sweeps as this rank's share of the job; `None` outside a job.
    /// Checkpoints are written by rank 0 alone, from the whole state every
    /// rank gathered after the sweep, and all ranks wait for the write.
    pub fn sample(
        model: &mut Model,
        threads: usize,
        checkpoint: &Option<(u64, PathBuf)>,
        quiet: bool,
    ) -> Option<Result<FitTiming, Failure>> {
        JOB.with_borrow_mut(|job| {
            let job = job.as_mut()?;
            Some(sample_on(job, model, threads, checkpoint, quiet))
        })
    }

    fn sample_on(
        job: &mut Job,
        model: &mut Model,
        threads: usize,
        checkpoint: &Option<(u64, PathBuf)>,
        quiet: bool,
    ) -> Result<FitTiming, Failure> {
        // `common::sample`, the one caller, has refused `--checkpoint-every 0`.
        let root = job.link.rank == 0;
        // MPI is called from this (the main) thread only, so the sweeps run
        // here with the global pool as their workers rather than inside a
        // pool's `install` (which would move them to a worker thread). The
        // command built that pool first thing (`use_threads`); the thread
        // count never changes the result, only how much of the machine a
        // rank takes, so a mismatch is a warning.
        use_threads(threads);
        if rayon::current_num_threads() != threads && root && !quiet {
            eprintln!(
                "themata: warning: rank 0 samples on {} worker threads, not the {threads} asked for",
                rayon::current_num_threads()
            );
        }
        let mut progress = SweepProgress::new(model.target, quiet || !root);
        let before = job.link.traffic;
        let waited_before = job.link.waiting;
        let every = checkpoint.as_ref().map(|(every, _)| *every);
        let ranks = job.link.ranks;
        let mut engine = RankEngine::new(model, &mut job.link, every)
            .map_err(|message| Failure::bad_input(anyhow::anyhow!(message)))?;
        let predicted = distributed::ring_bytes_per_sweep(model, engine.sampler(), ranks);
        let mut checkpoint_error = None;
        let timing = {
            fit::run_with_engine(
                model,
                &mut engine,
                &mut |event| progress.update(event),
                &mut |model| {
                    // Every rank gathered the whole state after this sweep
                    // (`RankEngine::settle`); rank 0 alone writes the one file.
                    if !root {
                        return ControlFlow::Continue(());
                    }
                    checkpoint_if_due(model, checkpoint, &mut checkpoint_error)
                },
            )
        };
        progress.finish();
        if let Some(err) = checkpoint_error {
            return Err(Failure::system(err));
        }
        let timing = timing?;
        let sweeps = engine.sweeps().max(1);
        let link = engine.link();
        let sent = link.traffic;
        let mine = [
            sent.ring_bytes - before.ring_bytes,
            sent.totals_bytes - before.totals_bytes,
            sent.gather_bytes - before.gather_bytes,
        ];
        let waited = link.gather(&[link.waiting - waited_before]);
        let all = link.gather(&mine);
        let per_rank: Vec<Traffic> = all
            .chunks_exact(3)
            .map(|part| Traffic {
                ring_bytes: part[0],
                totals_bytes: part[1],
                gather_bytes: part[2],
            })
            .collect();
        job.summary = Some(RanksSummary {
            ranks: job.link.ranks,
            sweeps,
            bytes_sent_per_sweep: per_rank.iter().map(|traffic| traffic.total() / sweeps).collect(),
            ring_bytes_per_sweep: per_rank
                .iter()
                .map(|traffic| traffic.ring_bytes / sweeps)
                .collect(),
            predicted_ring_bytes_per_sweep: predicted,
            bytes_sent: per_rank.iter().map(Traffic::total).collect(),
            exchange_seconds: waited,
        });
        Ok(timing)
    }

    /// What the last distributed fit sent, for summary.json.
    pub fn summary() -> Option<RanksSummary> {
        JOB.with_borrow(|job| job.as_ref()?.summary.clone())
    }

    /// Stops the whole job when this rank failed (the other ranks would
    /// otherwise wait for it forever): says which rank, then MPI_Abort with
    /// the failure's exit code.
    pub fn abort_on(failure: &Failure) {
        if failure.is_quiet_stop() {
            return;
        }
        JOB.with_borrow(|job| {
            if let Some(job) = job.as_ref()
                && job.link.ranks > 1
            {
                eprintln!(
                    "themata: error on rank {} of {}: {}",
                    job.link.rank,
                    job.link.ranks,
                    crate::cli::describe(&failure.error)
                );
                job.link.world.abort(i32::from(failure.code));
            }
        });
    }
}

pub use imp::{abort_on, default_threads, join, sample, summary, use_threads};
