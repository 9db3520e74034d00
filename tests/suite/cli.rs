//! The command line: each command's happy path, the contract downstream
//! tooling reads, and bad inputs with their exit codes.

use predicates::prelude::*;
use serde_json::Value;
use themata::model::corpus_file::save_corpus;

use crate::util::{Scratch, themata};

/// Exit codes documented in the README.
const BAD_INPUT: i32 = 2;
const FAILURE: i32 = 3;

/// Three small themes in plain text files.
fn text_folder(scratch: &Scratch) {
    let themes = [
        "tide quay harbour boat nets trawler catch tide quay harbour",
        "seed soil plot beans compost allotment seed soil plot beans",
        "bus road route timetable station driver bus road route station",
    ];
    for doc_idx in 0..12 {
        let text = themes[doc_idx % 3];
        scratch.write(&format!("docs/item-{doc_idx:02}.txt"), format!("{text} {text}"));
    }
}

fn build_corpus(scratch: &Scratch) {
    text_folder(scratch);
    themata(scratch.root())
        .args(["build", "docs", "--out", "corpus.bin", "--min-docs", "1"])
        .assert()
        .success();
}

fn fit_model(scratch: &Scratch) {
    build_corpus(scratch);
    themata(scratch.root())
        .args([
            "fit",
            "corpus.bin",
            "--topics",
            "3",
            "--out",
            "model",
            "--iterations",
            "60",
        ])
        .args(["--burn-in", "10", "--seed", "4", "--quiet"])
        .assert()
        .success();
}

fn read_json(path: &std::path::Path) -> Value {
    serde_json::from_slice(&std::fs::read(path).unwrap()).unwrap()
}

#[test]
fn build_prints_a_summary_and_writes_a_corpus() {
    let scratch = Scratch::new();
    text_folder(&scratch);
    scratch.write("docs/blank.txt", "   \n");
    themata(scratch.root())
        .args(["build", "docs", "--out", "corpus.bin", "--min-docs", "1"])
        .assert()
        .success()
        .stdout(predicate::str::contains(
            "documents: 13 read, 12 kept, 1 skipped (empty 1)",
        ))
        .stderr(predicate::str::contains("blank.txt"));
    assert!(scratch.path("corpus.bin").is_file());
}

#[test]
fn build_keeps_every_word_token_when_asked() {
    // Source: Unicode UAX #29 word boundaries — "Ünïcode-text, 42 x's!" has
    // the words Ünïcode, text, 42, x's; numbers are dropped by default, so
    // three word tokens remain.
    let scratch = Scratch::new();
    scratch.write("one.jsonl", "{\"id\":\"a\",\"text\":\"Ünïcode-text, 42 x's!\"}\n");
    themata(scratch.root())
        .args([
            "build",
            "one.jsonl",
            "--out",
            "c.bin",
            "--stopwords",
            "none",
            "--min-length",
            "1",
        ])
        .args(["--min-docs", "1", "--max-doc-share", "1"])
        .assert()
        .success()
        .stdout(predicate::str::contains("tokens: 3 kept of 3"));
}

#[test]
fn build_refuses_bad_inputs() {
    let scratch = Scratch::new();
    themata(scratch.root())
        .args(["build", "nowhere.txt", "--out", "c.bin"])
        .assert()
        .code(BAD_INPUT)
        .stderr(predicate::str::contains("nowhere.txt"));
    scratch.write("notes.xyz", "some words here");
    themata(scratch.root())
        .args(["build", "notes.xyz", "--out", "c.bin"])
        .assert()
        .code(BAD_INPUT)
        .stderr(predicate::str::contains("--format"));
    scratch.write("empty/a.txt", "");
    scratch.write("empty/b.txt", "the and of");
    themata(scratch.root())
        .args(["build", "empty", "--out", "c.bin"])
        .assert()
        .code(BAD_INPUT)
        .stderr(predicate::str::contains("no document has any words left"));
    scratch.write("bad.csv", "id,body\n1,harbour tide\n");
    themata(scratch.root())
        .args(["build", "bad.csv", "--out", "c.bin"])
        .assert()
        .code(BAD_INPUT)
        .stderr(predicate::str::contains("text"));
    assert!(!scratch.path("c.bin").exists(), "no output after a failed build");
}

#[test]
fn build_strict_turns_skips_into_failure() {
    let scratch = Scratch::new();
    text_folder(&scratch);
    scratch.write("docs/bad.txt", b"harbour \xff\xfe tide");
    themata(scratch.root())
        .args(["build", "docs", "--out", "c.bin", "--min-docs", "1", "--strict"])
        .assert()
        .code(BAD_INPUT)
        .stderr(predicate::str::contains("bad.txt").and(predicate::str::contains("--strict")));
    assert!(!scratch.path("c.bin").exists());
}

#[test]
fn build_reports_unwritable_output_as_io_failure() {
    let scratch = Scratch::new();
    text_folder(&scratch);
    themata(scratch.root())
        .args([
            "build",
            "docs",
            "--out",
            "missing/folder/c.bin",
            "--min-docs",
            "1",
        ])
        .assert()
        .code(FAILURE)
        .stderr(predicate::str::contains("missing/folder/c.bin"));
}

#[test]
fn build_reads_json_lines_from_stdin() {
    let scratch = Scratch::new();
    let lines: String = (0..6)
        .map(|i| format!("{{\"id\":\"n{i}\",\"text\":\"harbour tide quay number {i}\"}}\n"))
        .collect();
    themata(scratch.root())
        .args([
            "build",
            "-",
            "--out",
            "c.bin",
            "--min-docs",
            "1",
            "--max-doc-share",
            "1",
        ])
        .write_stdin(lines)
        .assert()
        .success()
        .stdout(predicate::str::contains("6 kept"));
}

#[test]
fn fit_writes_model_and_summary_contract() {
    let scratch = Scratch::new();
    fit_model(&scratch);
    let summary = read_json(&scratch.path("model/summary.json"));
    for key in [
        "format_version",
        "documents",
        "tokens",
        "vocabulary",
        "topics",
        "iterations",
        "seed",
        "threads",
        "alpha",
        "beta",
        "sampling_seconds",
        "tokens_per_second",
        "log_likelihood",
        "log_likelihood_trace",
        "sampler",
        "shards",
        "peak_rss_bytes",
    ] {
        assert!(summary.get(key).is_some(), "summary.json lacks {key}: {summary}");
    }
    // Source: issue 5 — auto picks the exact sampler for few topics.
    assert_eq!(summary["sampler"], "exact");
    #[cfg(target_os = "linux")]
    assert!(
        summary["peak_rss_bytes"].as_u64().unwrap() > 1_000_000,
        "{summary}"
    );
    assert_eq!(summary["documents"], 12);
    assert_eq!(summary["topics"], 3);
    assert_eq!(summary["iterations"], 60);
    assert_eq!(summary["alpha"].as_array().unwrap().len(), 3);
    let trace = summary["log_likelihood_trace"].as_array().unwrap();
    assert_eq!(trace.last().unwrap()[0], 60);
    assert_eq!(trace.last().unwrap()[1], summary["log_likelihood"]);
}

#[test]
fn fit_refuses_bad_inputs() {
    let scratch = Scratch::new();
    build_corpus(&scratch);
    themata(scratch.root())
        .args(["fit", "corpus.bin", "--topics", "0", "--out", "m"])
        .assert()
        .code(BAD_INPUT)
        .stderr(predicate::str::contains("topics"));
    themata(scratch.root())
        .args(["fit", "corpus.bin", "--topics", "1000", "--out", "m"])
        .assert()
        .code(BAD_INPUT)
        .stderr(predicate::str::contains("more than the"));
    // Source: common practice — the limit is stated where the flag is parsed.
    themata(scratch.root())
        .args(["fit", "corpus.bin", "--topics", "100000", "--out", "m"])
        .assert()
        .code(BAD_INPUT)
        .stderr(predicate::str::contains("not a whole number from 1 to 65536"));
    themata(scratch.root())
        .args(["fit", "absent.bin", "--topics", "3", "--out", "m"])
        .assert()
        .code(BAD_INPUT)
        .stderr(predicate::str::contains("absent.bin"));
    let mut damaged = std::fs::read(scratch.path("corpus.bin")).unwrap();
    let middle = damaged.len() / 2;
    damaged[middle] ^= 0xff;
    scratch.write("damaged.bin", damaged);
    themata(scratch.root())
        .args(["fit", "damaged.bin", "--topics", "3", "--out", "m"])
        .assert()
        .code(BAD_INPUT)
        .stderr(predicate::str::contains("checksum"));
    themata(scratch.root())
        .args([
            "fit",
            "corpus.bin",
            "--topics",
            "3",
            "--out",
            "m",
            "--alpha",
            "0.1,0.2",
        ])
        .assert()
        .code(BAD_INPUT)
        .stderr(predicate::str::contains("alpha: has 2 values but needs 1 or 3"));
    scratch.write("mine/notes.txt", "keep me");
    themata(scratch.root())
        .args(["fit", "corpus.bin", "--topics", "3", "--out", "mine"])
        .assert()
        .code(BAD_INPUT)
        .stderr(predicate::str::contains("not a themata output folder"));
    assert!(scratch.path("mine/notes.txt").is_file());
    assert!(!scratch.path("m").exists());
}

#[test]
fn show_prints_topic_and_document_tsv_contract() {
    let scratch = Scratch::new();
    fit_model(&scratch);
    let output = themata(scratch.root())
        .args(["show", "model", "--format", "tsv", "--words", "all"])
        .output()
        .unwrap();
    assert!(output.status.success());
    let text = String::from_utf8(output.stdout).unwrap();
    let mut lines = text.lines();
    assert_eq!(lines.next(), Some("topic\trank\tword\tweight"));
    let mut per_topic = [0.0f64; 3];
    for line in lines {
        let fields: Vec<&str> = line.split('\t').collect();
        assert_eq!(fields.len(), 4, "{line}");
        let topic: usize = fields[0].parse().unwrap();
        let weight: f64 = fields[3].parse().unwrap();
        per_topic[topic] += weight;
    }
    // Source: common practice — phi_k is a distribution; the words a topic has
    // tokens of carry almost all of its mass (beta = 0.01 spreads the rest).
    for total in per_topic {
        assert!(total > 0.9 && total <= 1.0 + 1e-9, "{per_topic:?}");
    }
    let output = themata(scratch.root())
        .args(["show", "model", "--documents", "--format", "tsv"])
        .output()
        .unwrap();
    let text = String::from_utf8(output.stdout).unwrap();
    let mut lines = text.lines();
    assert_eq!(lines.next(), Some("document\ttopic\tshare\tlow\thigh"));
    let rows: Vec<Vec<String>> = lines
        .map(|l| l.split('\t').map(str::to_string).collect())
        .collect();
    assert_eq!(rows.len(), 12 * 3);
    let first_doc: f64 = rows
        .iter()
        .filter(|r| r[0] == rows[0][0])
        .map(|r| r[2].parse::<f64>().unwrap())
        .sum();
    assert!(
        (first_doc - 1.0).abs() < 1e-9,
        "shares of a document sum to 1, got {first_doc}"
    );
    themata(scratch.root())
        .args(["show", "model", "--format", "json", "--words", "2"])
        .assert()
        .success()
        .stdout(predicate::str::contains("\"topics\""));
    themata(scratch.root()).args(["show", "model"]).assert().success();
}

#[test]
fn show_refuses_bad_inputs() {
    let scratch = Scratch::new();
    fit_model(&scratch);
    themata(scratch.root())
        .args(["show", "nothing-here"])
        .assert()
        .code(BAD_INPUT)
        .stderr(predicate::str::contains("no model here"));
    themata(scratch.root())
        .args(["show", "model", "--words", "0"])
        .assert()
        .code(BAD_INPUT);
    themata(scratch.root())
        .args(["show", "model", "--format", "xml"])
        .assert()
        .code(BAD_INPUT);
    scratch.write("fake/model.bin", "not a model");
    themata(scratch.root())
        .args(["show", "fake"])
        .assert()
        .code(BAD_INPUT)
        .stderr(predicate::str::contains("not a themata model file"));
}

#[test]
fn a_model_with_a_valid_checksum_and_inconsistent_contents_is_bad_input() {
    // Source: common practice — contents are checked, not only the checksum:
    // a token moved to another topic without its counts is written with a
    // correct checksum, and loading it must fail cleanly with exit 2.
    let scratch = Scratch::new();
    fit_model(&scratch);
    let path = scratch.path("model/model.bin");
    let mut model = themata::model::Model::load(&path).unwrap();
    model.state.assignments[0] = (model.state.assignments[0] + 1) % 3;
    model.save(&path).unwrap();
    themata(scratch.root())
        .args(["show", "model"])
        .assert()
        .code(BAD_INPUT)
        .stderr(predicate::str::contains("contents are inconsistent"))
        .stderr(predicate::str::contains(
            "stored counts disagree with the topic assignments",
        ));
}

fn run_config(scratch: &Scratch, extra: &str) -> std::path::PathBuf {
    text_folder(scratch);
    scratch.write(
        "run.toml",
        format!(
            "[input]\npaths = [\"docs\"]\n\n[vocabulary]\nmin_docs = 1\n\n[fit]\ntopics = 3\niterations = 50\nburn_in = 5\n{extra}\n[output]\ndir = \"out\"\n"
        ),
    )
}

#[test]
fn run_builds_fits_and_reports() {
    let scratch = Scratch::new();
    run_config(&scratch, "");
    themata(scratch.root())
        .args(["run", "run.toml", "--quiet"])
        .assert()
        .success()
        .stdout(predicate::str::contains("topic").and(predicate::str::contains("harbour")));
    for name in [
        "corpus.bin",
        "model.bin",
        "summary.json",
        "topics.tsv",
        "documents.tsv",
        "build.json",
    ] {
        assert!(scratch.path("out").join(name).is_file(), "{name} missing");
    }
    // Command-line values override the file.
    themata(scratch.root())
        .args(["run", "run.toml", "--quiet", "--topics", "2"])
        .assert()
        .success();
    assert_eq!(read_json(&scratch.path("out/summary.json"))["topics"], 2);
}

#[test]
fn run_refuses_bad_configs() {
    let scratch = Scratch::new();
    run_config(&scratch, "colour = \"blue\"\n");
    themata(scratch.root())
        .args(["run", "run.toml"])
        .assert()
        .code(BAD_INPUT)
        .stderr(predicate::str::contains("run.toml:11:").and(predicate::str::contains("colour")));
    run_config(&scratch, "seed = -3\n");
    themata(scratch.root())
        .args(["run", "run.toml"])
        .assert()
        .code(BAD_INPUT)
        .stderr(predicate::str::contains("run.toml:11:"));
    themata(scratch.root())
        .args(["run", "absent.toml"])
        .assert()
        .code(BAD_INPUT)
        .stderr(predicate::str::contains("absent.toml"));
    run_config(&scratch, "");
    themata(scratch.root())
        .args(["run", "run.toml", "--topics", "0"])
        .assert()
        .code(BAD_INPUT);
    assert!(!scratch.path("out").exists(), "failed runs leave no output");
}

#[test]
fn failed_run_keeps_the_previous_output() {
    let scratch = Scratch::new();
    run_config(&scratch, "");
    themata(scratch.root())
        .args(["run", "run.toml", "--quiet"])
        .assert()
        .success();
    let before = std::fs::read(scratch.path("out/model.bin")).unwrap();
    themata(scratch.root())
        .args(["run", "run.toml", "--quiet", "--topics", "100000"])
        .assert()
        .code(BAD_INPUT);
    assert_eq!(std::fs::read(scratch.path("out/model.bin")).unwrap(), before);
}

#[test]
fn learned_priors_are_reported() {
    let scratch = Scratch::new();
    build_corpus(&scratch);
    themata(scratch.root())
        .args([
            "fit",
            "corpus.bin",
            "--topics",
            "3",
            "--out",
            "model",
            "--iterations",
            "80",
        ])
        .args([
            "--burn-in",
            "20",
            "--alpha",
            "learn",
            "--beta",
            "learn",
            "--samples",
            "3",
            "--lag",
            "5",
        ])
        .assert()
        .success()
        .stdout(predicate::str::contains("learned alpha").and(predicate::str::contains("learned beta")));
    let summary = read_json(&scratch.path("model/summary.json"));
    assert_eq!(summary["learned_alpha"], true);
    assert!(summary["alpha_trace"].as_array().unwrap().len() > 1);
    assert!(summary["beta_trace"].as_array().unwrap().len() > 1);
    assert_eq!(summary["sample_iterations"], serde_json::json!([70, 75, 80]));
    assert!(summary["convergence"]["method"].is_string());
}

#[test]
fn document_shares_carry_intervals() {
    let scratch = Scratch::new();
    build_corpus(&scratch);
    themata(scratch.root())
        .args([
            "fit",
            "corpus.bin",
            "--topics",
            "3",
            "--out",
            "model",
            "--iterations",
            "60",
        ])
        .args(["--alpha", "1", "--beta", "0.1", "--quiet"])
        .assert()
        .success();
    let output = themata(scratch.root())
        .args([
            "show",
            "model",
            "--documents",
            "--format",
            "tsv",
            "--interval",
            "0.8",
        ])
        .output()
        .unwrap();
    let text = String::from_utf8(output.stdout).unwrap();
    let mut lines = text.lines();
    assert_eq!(lines.next(), Some("document\ttopic\tshare\tlow\thigh"));
    for line in lines {
        let fields: Vec<f64> = line.split('\t').skip(2).map(|f| f.parse().unwrap()).collect();
        // Source: common practice — with both Beta parameters at least 1
        // (alpha = 1 here) the marginal is unimodal and its mean lies inside
        // the central 80% interval.
        assert!(fields[1] < fields[0] && fields[0] < fields[2], "{line}");
        assert!(fields[1] >= 0.0 && fields[2] <= 1.0, "{line}");
    }
    themata(scratch.root())
        .args(["show", "model", "--interval", "1.5"])
        .assert()
        .code(BAD_INPUT);
}

#[test]
fn continue_adds_sweeps_to_a_saved_model() {
    let scratch = Scratch::new();
    fit_model(&scratch);
    themata(scratch.root())
        .args(["fit", "--continue", "model", "--iterations", "15", "--quiet"])
        .assert()
        .success();
    assert_eq!(read_json(&scratch.path("model/summary.json"))["iterations"], 75);
    themata(scratch.root())
        .args(["fit", "--continue", "model", "--iterations", "5", "--topics", "4"])
        .assert()
        .code(BAD_INPUT)
        .stderr(predicate::str::contains("keeps the model's topics"));
    themata(scratch.root())
        .args(["fit", "--resume", "model"])
        .assert()
        .code(BAD_INPUT)
        .stderr(predicate::str::contains("no checkpoint"));
}

#[test]
fn killed_run_resumes_to_the_same_bytes() {
    // Source: common practice — a checkpoint holds the complete sampler state
    // (assignments, priors, traces, samples, RNG), so finishing from it must
    // give the model an uninterrupted run gives.
    let scratch = Scratch::new();
    let data = themata::testbed::synthetic::bars(1500, 60, 1.0, 9);
    save_corpus(&data.corpus, &scratch.path("bars.bin")).unwrap();
    let args = [
        "--topics",
        "10",
        "--iterations",
        "1500",
        "--burn-in",
        "200",
        "--seed",
        "12",
    ];
    let extra = ["--samples", "3", "--lag", "7", "--quiet", "--threads", "1"];
    themata(scratch.root())
        .args(["fit", "bars.bin", "--out", "whole"])
        .args(args)
        .args(extra)
        .assert()
        .success();

    let binary = assert_cmd::cargo::cargo_bin("themata");
    let mut child = std::process::Command::new(binary)
        .current_dir(scratch.root())
        .args(["fit", "bars.bin", "--out", "killed", "--checkpoint-every", "25"])
        .args(args)
        .args(extra)
        .spawn()
        .unwrap();
    let checkpoint = scratch.path("killed.checkpoint");
    let deadline = std::time::Instant::now() + std::time::Duration::from_secs(120);
    while !checkpoint.exists() {
        assert!(std::time::Instant::now() < deadline, "no checkpoint appeared");
        std::thread::sleep(std::time::Duration::from_millis(5));
    }
    std::thread::sleep(std::time::Duration::from_millis(150));
    child.kill().unwrap();
    child.wait().unwrap();
    assert!(
        !scratch.path("killed").exists(),
        "the run finished before it was killed; make it longer"
    );

    themata(scratch.root())
        .args(["fit", "--resume", "killed", "--quiet"])
        .assert()
        .success();
    assert!(
        !checkpoint.exists(),
        "the checkpoint is removed once the run is complete"
    );
    let whole = std::fs::read(scratch.path("whole/model.bin")).unwrap();
    let resumed = std::fs::read(scratch.path("killed/model.bin")).unwrap();
    assert!(
        whole == resumed,
        "resumed model differs from the uninterrupted one"
    );
}

#[test]
fn fit_holdout_records_heldout_perplexity() {
    let scratch = Scratch::new();
    build_corpus(&scratch);
    themata(scratch.root())
        .args([
            "fit",
            "corpus.bin",
            "--topics",
            "3",
            "--out",
            "model",
            "--iterations",
            "40",
        ])
        .args(["--holdout", "0.25"])
        .assert()
        .success()
        .stdout(predicate::str::contains("held-out perplexity"));
    let summary = read_json(&scratch.path("model/summary.json"));
    assert_eq!(summary["documents"], 9, "3 of 12 documents held out");
    let perplexity = summary["heldout_perplexity"].as_f64().unwrap();
    // Source: common practice — perplexity is at least 1 and, for a model
    // better than uniform, below the vocabulary size.
    assert!(
        perplexity >= 1.0 && perplexity < summary["vocabulary"].as_f64().unwrap(),
        "{perplexity}"
    );
    themata(scratch.root())
        .args([
            "fit",
            "corpus.bin",
            "--topics",
            "3",
            "--out",
            "m2",
            "--holdout",
            "1",
        ])
        .assert()
        .code(BAD_INPUT);
}

#[test]
fn assign_places_new_documents_and_flags_unknown_ones() {
    let scratch = Scratch::new();
    fit_model(&scratch);
    scratch.write(
        "new.jsonl",
        "{\"id\":\"n1\",\"text\":\"harbour tide quay boat nets zebra\"}\n{\"id\":\"n2\",\"text\":\"zebra giraffe\"}\n",
    );
    let output = themata(scratch.root())
        .args(["assign", "model", "new.jsonl"])
        .output()
        .unwrap();
    assert!(output.status.success());
    let text = String::from_utf8(output.stdout).unwrap();
    let stderr = String::from_utf8(output.stderr).unwrap();
    let mut lines = text.lines();
    assert_eq!(lines.next(), Some("document\ttopic\tshare\tlow\thigh"));
    let rows: Vec<&str> = lines.collect();
    assert_eq!(rows.len(), 3, "three topic rows for n1, none for n2: {text}");
    assert!(rows.iter().all(|r| r.starts_with("n1\t")));
    assert!(stderr.contains("flagged: document `n2`"), "{stderr}");
    assert!(stderr.contains("3 unknown tokens"), "{stderr}");
    let output = themata(scratch.root())
        .args(["assign", "model", "new.jsonl", "--format", "jsonl", "--quiet"])
        .output()
        .unwrap();
    let records: Vec<Value> = String::from_utf8(output.stdout)
        .unwrap()
        .lines()
        .map(|l| serde_json::from_str(l).unwrap())
        .collect();
    assert_eq!(records.len(), 2);
    assert_eq!(records[1]["no_known_words"], true);
    assert_eq!(records[0]["unknown_tokens"], 1);
    themata(scratch.root())
        .args(["assign", "model", "absent.jsonl"])
        .assert()
        .code(BAD_INPUT)
        .stderr(predicate::str::contains("absent.jsonl"));
    themata(scratch.root())
        .args(["assign", "no-model", "new.jsonl"])
        .assert()
        .code(BAD_INPUT);
    themata(scratch.root())
        .args(["assign", "model", "new.jsonl", "--format", "xml"])
        .assert()
        .code(BAD_INPUT);
}

#[test]
fn score_reports_the_json_contract() {
    let scratch = Scratch::new();
    fit_model(&scratch);
    let output = themata(scratch.root())
        .args([
            "score",
            "model",
            "--heldout",
            "docs",
            "--format",
            "json",
            "--method",
            "left-to-right",
        ])
        .args(["--particles", "5"])
        .output()
        .unwrap();
    assert!(
        output.status.success(),
        "{}",
        String::from_utf8_lossy(&output.stderr)
    );
    let json: Value = serde_json::from_slice(&output.stdout).unwrap();
    for key in [
        "heldout_perplexity",
        "method",
        "tokens_scored",
        "unknown_tokens",
        "coherence",
    ] {
        assert!(json.get(key).is_some(), "missing {key}: {json}");
    }
    for key in ["umass", "npmi", "cv", "per_topic"] {
        assert!(json["coherence"].get(key).is_some(), "missing coherence.{key}");
    }
    assert_eq!(json["method"], "left-to-right");
    assert_eq!(json["coherence"]["per_topic"].as_array().unwrap().len(), 3);
    // Scoring the training corpus file itself works too (same vocabulary).
    themata(scratch.root())
        .args(["score", "model", "--heldout", "corpus.bin"])
        .assert()
        .success()
        .stdout(predicate::str::contains("held-out perplexity"));
    // A window larger than every document: each document counts as one window.
    themata(scratch.root())
        .args(["score", "model", "--npmi-window", "500", "--cv-window", "500"])
        .assert()
        .success()
        .stdout(predicate::str::contains("window 500"));
}

#[test]
fn score_refuses_bad_inputs() {
    let scratch = Scratch::new();
    fit_model(&scratch);
    scratch.write("other/a.txt", "alpha beta gamma delta alpha beta gamma delta");
    scratch.write("other/b.txt", "alpha beta gamma delta epsilon alpha beta");
    themata(scratch.root())
        .args([
            "build",
            "other",
            "--out",
            "other.bin",
            "--min-docs",
            "1",
            "--max-doc-share",
            "1",
        ])
        .assert()
        .success();
    themata(scratch.root())
        .args(["score", "model", "--heldout", "other.bin"])
        .assert()
        .code(BAD_INPUT)
        .stderr(predicate::str::contains("shares no word"));
    themata(scratch.root())
        .args([
            "build",
            "docs",
            "--out",
            "stemmed.bin",
            "--min-docs",
            "1",
            "--stem",
            "english",
        ])
        .assert()
        .success();
    themata(scratch.root())
        .args(["score", "model", "--heldout", "stemmed.bin"])
        .assert()
        .code(BAD_INPUT)
        .stderr(predicate::str::contains("other tokenizer settings"));
    scratch.write("empty/blank.txt", "   ");
    themata(scratch.root())
        .args(["score", "model", "--heldout", "empty"])
        .assert()
        .code(BAD_INPUT)
        .stderr(predicate::str::contains("no usable documents"));
    themata(scratch.root())
        .args(["score", "model", "--top-words", "1"])
        .assert()
        .code(BAD_INPUT);
}

#[test]
fn sweep_writes_a_table_and_recommends() {
    let scratch = Scratch::new();
    build_corpus(&scratch);
    themata(scratch.root())
        .args([
            "sweep",
            "corpus.bin",
            "--topics",
            "2,3",
            "--seeds",
            "2",
            "--iterations",
            "30",
        ])
        .args(["--holdout", "0.25", "--out", "sweep"])
        .assert()
        .success()
        .stdout(predicate::str::contains("recommended:"));
    let report = read_json(&scratch.path("sweep/summary.json"));
    assert_eq!(report["rows"].as_array().unwrap().len(), 2);
    assert!(report["recommended_topics"].as_u64().is_some());
    let tsv = std::fs::read_to_string(scratch.path("sweep/sweep.tsv")).unwrap();
    assert!(tsv.starts_with("topics\tseeds\theldout_perplexity"));
    themata(scratch.root())
        .args([
            "sweep",
            "corpus.bin",
            "--topics",
            "2",
            "--seeds",
            "0",
            "--out",
            "s2",
        ])
        .assert()
        .code(BAD_INPUT);
    themata(scratch.root())
        .args(["sweep", "corpus.bin", "--topics", "0,2", "--out", "s3"])
        .assert()
        .code(BAD_INPUT);
    themata(scratch.root())
        .args(["sweep", "absent.bin", "--topics", "2", "--out", "s4"])
        .assert()
        .code(BAD_INPUT);
}

#[test]
fn bench_runs_quickly_and_prints_its_tables() {
    // Source: issue 5 — `themata bench` prints rates, ratios, memory per
    // token and log-likelihood against time for the reference and the fast
    // samplers. --quick checks the command works; it measures little.
    let scratch = Scratch::new();
    let output = themata(scratch.root())
        .args(["bench", "--quick"])
        .assert()
        .success()
        .get_output()
        .stdout
        .clone();
    let text = String::from_utf8(output).unwrap();
    for expected in [
        "fast/ref",
        "tok/s",
        "B/tok fast",
        "log-likelihood against sweep time",
        "exact",
        "metropolis",
    ] {
        assert!(text.contains(expected), "bench output lacks {expected}:\n{text}");
    }
    // Both parallel chains end identical to the one-thread chains.
    assert!(!text.contains(" NO "), "{text}");
}

#[test]
fn fit_accepts_each_sampler_and_rejects_unknown_ones() {
    let scratch = Scratch::new();
    build_corpus(&scratch);
    for sampler in ["exact", "metropolis", "sparse", "reference", "auto"] {
        themata(scratch.root())
            .args(["fit", "corpus.bin", "-k", "3", "--iterations", "20", "--quiet"])
            .args(["--sampler", sampler, "--shards", "2", "--out", sampler])
            .assert()
            .success();
        let summary = read_json(&scratch.path(sampler).join("summary.json"));
        let expected = if sampler == "auto" { "exact" } else { sampler };
        assert_eq!(summary["sampler"], expected);
    }
    themata(scratch.root())
        .args([
            "fit",
            "corpus.bin",
            "-k",
            "3",
            "--sampler",
            "fastest",
            "--out",
            "x",
        ])
        .assert()
        .code(2);
    themata(scratch.root())
        .args(["fit", "corpus.bin", "-k", "3", "--shards", "0", "--out", "x"])
        .assert()
        .code(2)
        .stderr(predicates::str::contains("shards"));
}

#[test]
fn assign_ends_quietly_when_its_reader_closes_the_pipe() {
    // Source: common practice (`cmd | head` must not turn into an error):
    // the reader goes away after one line while assign still has far more
    // than a pipe buffer (64 KiB on Linux, pipe(7)) left to write.
    use std::io::{BufRead, BufReader};
    let scratch = Scratch::new();
    fit_model(&scratch);
    let line = "{\"text\":\"harbour tide quay boat nets seed soil plot bus road\"}\n";
    scratch.write("many.jsonl", line.repeat(4000));
    let mut child = std::process::Command::new(assert_cmd::cargo::cargo_bin("themata"))
        .current_dir(scratch.root())
        .args(["assign", "model", "many.jsonl", "--quiet"])
        .stdout(std::process::Stdio::piped())
        .stderr(std::process::Stdio::piped())
        .spawn()
        .unwrap();
    let mut reader = BufReader::new(child.stdout.take().unwrap());
    let mut first = String::new();
    reader.read_line(&mut first).unwrap();
    assert!(first.starts_with("document\t"), "{first}");
    drop(reader);
    let output = child.wait_with_output().unwrap();
    assert_eq!(
        output.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&output.stderr)
    );
    assert!(
        output.stderr.is_empty(),
        "{}",
        String::from_utf8_lossy(&output.stderr)
    );
}
