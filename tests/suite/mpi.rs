//! Fitting across the ranks of an MPI job (built and run only with
//! `--features mpi`; `.ci/mpi.sh` installs Open MPI and runs these). Each
//! test starts `mpirun --allow-run-as-root --oversubscribe -np R themata ...`
//! on a small synthetic corpus and checks the job against the single-process
//! fit with the same shards.

use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

use themata::model::corpus_file::save_corpus;
use themata::testbed::synthetic::{UrnCorpusSettings, urn_corpus};

use crate::util::{Scratch, themata};

/// The themata binary cargo built for these tests (with the feature).
fn binary() -> PathBuf {
    PathBuf::from(env!("CARGO_BIN_EXE_themata"))
}

/// `mpirun ... -np ranks themata ARGS`, run from `dir`.
fn mpirun(dir: &Path, ranks: usize, args: &[&str]) -> Command {
    let mut command = Command::new("mpirun");
    command
        .current_dir(dir)
        .args([
            "--allow-run-as-root",
            "--oversubscribe",
            "-np",
            &ranks.to_string(),
        ])
        .arg(binary())
        .args(args);
    command
}

/// A 60,000-token corpus drawn from the LDA generative process, saved in `scratch`.
fn corpus(scratch: &Scratch, n_tokens: usize) -> PathBuf {
    let (corpus, _) = urn_corpus(&UrnCorpusSettings {
        n_tokens,
        n_words: 3000,
        n_topics: 12,
        mean_doc_len: 80,
        alpha: 0.1,
        beta: 0.05,
        zipf_exponent: 1.0,
        seed: 16,
    });
    let path = scratch.path("corpus.bin");
    save_corpus(&corpus, &path).expect("save corpus");
    path
}

/// Fit options shared by the single-process and the MPI runs: learned
/// alpha and beta, a trace every sweep, three samples, four shards.
fn fit_args<'a>(corpus: &'a str, out: &'a str, sampler: &'a str, iterations: &'a str) -> Vec<&'a str> {
    vec![
        "fit",
        corpus,
        "--out",
        out,
        "--topics",
        "12",
        "--iterations",
        iterations,
        "--burn-in",
        "10",
        "--alpha",
        "learn",
        "--beta",
        "learn",
        "--learn-every",
        "5",
        "--trace-every",
        "1",
        "--samples",
        "3",
        "--lag",
        "2",
        "--shards",
        "4",
        "--sampler",
        sampler,
        "--quiet",
    ]
}

fn summary(dir: &Path) -> serde_json::Value {
    serde_json::from_slice(&std::fs::read(dir.join("summary.json")).expect("summary.json")).expect("json")
}

#[test]
fn two_and_four_ranks_write_the_single_process_model_byte_for_byte() {
    // Source: common practice — the determinism contract of ARCHITECTURE.md:
    // same inputs, seed and shards give the same model file for any rank count.
    let scratch = Scratch::new();
    let corpus = corpus(&scratch, 60_000);
    let corpus = corpus.to_str().unwrap();
    for sampler in ["sparse", "metropolis", "exact"] {
        let single = format!("single-{sampler}");
        themata(scratch.root())
            .args(fit_args(corpus, &single, sampler, "30"))
            .assert()
            .success();
        let expected = std::fs::read(scratch.path(&single).join("model.bin")).unwrap();
        let single_summary = summary(&scratch.path(&single));
        for ranks in [2, 4] {
            let out = format!("ranks{ranks}-{sampler}");
            let status = mpirun(scratch.root(), ranks, &fit_args(corpus, &out, sampler, "30"))
                .status()
                .expect("mpirun runs");
            assert!(status.success(), "{sampler} on {ranks} ranks: {status}");
            let found = std::fs::read(scratch.path(&out).join("model.bin")).unwrap();
            assert!(
                found == expected,
                "{sampler}: the model of {ranks} ranks differs from one process"
            );
            let summary = summary(&scratch.path(&out));
            // The learned priors agree (they are in the model file too; the
            // summary shows them readably).
            for field in [
                "alpha",
                "beta",
                "alpha_trace",
                "beta_trace",
                "log_likelihood_trace",
            ] {
                assert_eq!(
                    summary[field], single_summary[field],
                    "{sampler}, {ranks} ranks: {field}"
                );
            }
            let record = &summary["ranks"];
            assert_eq!(record["ranks"], ranks);
            let predicted = record["predicted_ring_bytes_per_sweep"].as_u64().unwrap();
            assert!(predicted > 0);
            for sent in record["ring_bytes_per_sweep"].as_array().unwrap() {
                assert_eq!(sent.as_u64(), Some(predicted), "{sampler}, {ranks} ranks");
            }
        }
    }
}

#[test]
fn ranks_that_cannot_share_the_grid_are_refused_with_a_reason() {
    // Source: common practice — P must be a multiple of R; a usage error is exit 2.
    let scratch = Scratch::new();
    let corpus = corpus(&scratch, 20_000);
    let output = mpirun(
        scratch.root(),
        3,
        &fit_args(corpus.to_str().unwrap(), "out", "sparse", "20"),
    )
    .output()
    .expect("mpirun runs");
    assert_eq!(output.status.code(), Some(2), "{output:?}");
    let stderr = String::from_utf8_lossy(&output.stderr);
    assert!(
        stderr.contains("4 shards, which 3 ranks cannot share"),
        "{stderr}"
    );
    assert!(!scratch.path("out").exists());
}

/// The pid of rank `rank` among the children of `mpirun_pid` (Open MPI
/// puts each rank's number in its environment).
fn rank_pid(mpirun_pid: u32, rank: usize) -> Option<u32> {
    let wanted = format!("OMPI_COMM_WORLD_RANK={rank}");
    for entry in std::fs::read_dir("/proc").ok()?.flatten() {
        let Ok(pid) = entry.file_name().to_string_lossy().parse::<u32>() else {
            continue;
        };
        let Ok(stat) = std::fs::read_to_string(format!("/proc/{pid}/stat")) else {
            continue;
        };
        // The parent pid is the second field after the command in parentheses.
        let parent = stat
            .rsplit_once(')')
            .and_then(|(_, rest)| rest.split_whitespace().nth(1))
            .and_then(|field| field.parse::<u32>().ok());
        if parent != Some(mpirun_pid) {
            continue;
        }
        let environ = std::fs::read(format!("/proc/{pid}/environ")).unwrap_or_default();
        if environ
            .split(|&byte| byte == 0)
            .any(|item| item == wanted.as_bytes())
        {
            return Some(pid);
        }
    }
    None
}

#[test]
fn a_killed_rank_stops_the_job_publishes_nothing_and_the_resume_is_exact() {
    // Source: common practice — a checkpoint resumed with the same ranks ends
    // byte-identical to an uninterrupted run (ARCHITECTURE.md invariants).
    let scratch = Scratch::new();
    let corpus = corpus(&scratch, 100_000);
    let corpus = corpus.to_str().unwrap();
    let mut args = fit_args(corpus, "killed", "sparse", "400");
    args.extend(["--checkpoint-every", "10"]);
    let mut job = mpirun(scratch.root(), 2, &args)
        .stdout(Stdio::null())
        .stderr(Stdio::piped())
        .spawn()
        .expect("mpirun starts");
    let checkpoint = scratch.path("killed.checkpoint");
    let started = Instant::now();
    while !checkpoint.exists() {
        assert!(
            started.elapsed() < Duration::from_secs(60),
            "no checkpoint within 60 s"
        );
        std::thread::sleep(Duration::from_millis(20));
    }
    let victim = rank_pid(job.id(), 1).expect("rank 1 is a child of mpirun");
    let killed = Command::new("kill")
        .args(["-9", &victim.to_string()])
        .status()
        .unwrap();
    assert!(killed.success());
    let killed_at = Instant::now();
    // The job must stop by itself, within a bounded time.
    let status = loop {
        if let Some(status) = job.try_wait().unwrap() {
            break status;
        }
        assert!(
            killed_at.elapsed() < Duration::from_secs(60),
            "the job did not stop within 60 s"
        );
        std::thread::sleep(Duration::from_millis(50));
    };
    let mut stderr = String::new();
    std::io::Read::read_to_string(job.stderr.as_mut().unwrap(), &mut stderr).unwrap();
    assert!(!status.success(), "{stderr}");
    assert!(stderr.contains("rank 1"), "the message names the rank: {stderr}");
    assert!(!scratch.path("killed").exists(), "nothing is published");

    // Resume on the same number of ranks; compare with one uninterrupted process.
    let status = mpirun(scratch.root(), 2, &["fit", "--resume", "killed", "--quiet"])
        .status()
        .unwrap();
    assert!(status.success());
    let mut reference = fit_args(corpus, "reference", "sparse", "400");
    reference.extend(["--checkpoint-every", "10"]);
    themata(scratch.root()).args(&reference).assert().success();
    let resumed = std::fs::read(scratch.path("killed").join("model.bin")).unwrap();
    let expected = std::fs::read(scratch.path("reference").join("model.bin")).unwrap();
    assert!(
        resumed == expected,
        "the resumed model differs from the uninterrupted one"
    );
    assert!(!checkpoint.exists(), "the finished run removes its checkpoint");
}

#[test]
fn run_fits_on_ranks_and_refuses_a_run_root() {
    // Source: common practice — the same config on two ranks writes the same
    // model as on one process; what is unsupported is refused with exit 2.
    let scratch = Scratch::new();
    // Two invented themes of twelve words each; a document mixes them.
    let words: Vec<String> = (0..24)
        .map(|w| {
            format!(
                "{}{}",
                ["river", "market"][w / 12],
                ["ab", "cd", "ef", "gh", "ij", "kl"][w % 6].repeat(w % 12 / 6 + 1)
            )
        })
        .collect();
    let docs: String = (0..120)
        .map(|doc| {
            let text: Vec<&str> = (0..30)
                .map(|i| {
                    let theme = usize::from(i * 7 % 10 < doc % 10);
                    words[theme * 12 + (doc * 5 + i * 3) % 12].as_str()
                })
                .collect();
            format!("{{\"id\": \"d{doc}\", \"text\": \"{}\"}}\n", text.join(" "))
        })
        .collect();
    scratch.write("docs.jsonl", docs);
    let config = "[input]\npaths = [\"docs.jsonl\"]\nformat = \"jsonl\"\n\n[vocabulary]\nmin_docs = 1\nmax_doc_share = 1.0\n\n[fit]\ntopics = 3\niterations = 20\nshards = 2\nsampler = \"sparse\"\n";
    scratch.write("run.toml", config);
    themata(scratch.root())
        .args(["run", "run.toml", "--quiet", "--out", "one"])
        .assert()
        .success();
    let status = mpirun(scratch.root(), 2, &["run", "run.toml", "--quiet", "--out", "two"])
        .stdout(Stdio::null())
        .status()
        .unwrap();
    assert!(status.success());
    let one = std::fs::read(scratch.path("one").join("model.bin")).unwrap();
    let two = std::fs::read(scratch.path("two").join("model.bin")).unwrap();
    assert!(one == two, "run on two ranks differs from one process");
    assert_eq!(summary(&scratch.path("two"))["ranks"]["ranks"], 2);

    scratch.write(
        "root.toml",
        format!("{config}\n[publish]\nroot = \"published\"\n"),
    );
    let output = mpirun(scratch.root(), 2, &["run", "root.toml", "--quiet"])
        .output()
        .unwrap();
    assert_eq!(output.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&output.stderr).contains("run root"));
    assert!(!scratch.path("published").exists());
}
