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
        .args(["show", "model", "--documents", "--format", "tsv", "--all-topics"])
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
    // Three shares of six significant digits each: each is off by at most
    // half a unit in the sixth digit.
    assert!(
        (first_doc - 1.0).abs() < 2e-6,
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
        .args(["assign", "model", "new.jsonl", "--all-topics"])
        .output()
        .unwrap();
    assert!(output.status.success());
    let text = String::from_utf8(output.stdout).unwrap();
    let stderr = String::from_utf8(output.stderr).unwrap();
    let mut lines = text.lines();
    assert_eq!(lines.next(), Some("document\ttopic\tshare\tlow\thigh"));
    let rows: Vec<&str> = lines.collect();
    assert_eq!(rows.len(), 4, "three topic rows for n1, one for n2: {text}");
    assert!(rows[..3].iter().all(|r| r.starts_with("n1\t")));
    // Source: issue 11, item 9 — a document with no known word is in every
    // format, as a row that says so.
    assert_eq!(rows[3], "n2\tunplaced\t\t\t");
    assert!(stderr.contains("flagged: document `n2`"), "{stderr}");
    assert!(stderr.contains("3 tokens unknown"), "{stderr}");
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
    assert_eq!(records[1]["placed"], false);
    assert_eq!(records[1]["topics"], serde_json::json!([]));
    assert_eq!(records[0]["placed"], true);
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
        "time to quality",
        "time to target",
        "exact",
        "metropolis",
        "sparse",
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

/// Significant digits of a number as printed (leading zeros, sign, point
/// and exponent do not count).
fn significant_digits(text: &str) -> usize {
    let mantissa = text.split(['e', 'E']).next().unwrap();
    let digits: String = mantissa.chars().filter(char::is_ascii_digit).collect();
    digits.trim_start_matches('0').len().max(1)
}

/// Every number in a JSON value.
fn json_numbers(value: &Value, out: &mut Vec<f64>) {
    match value {
        Value::Number(number) => out.push(number.as_f64().unwrap()),
        Value::Array(items) => items.iter().for_each(|item| json_numbers(item, out)),
        Value::Object(fields) => fields.values().for_each(|item| json_numbers(item, out)),
        _ => {}
    }
}

#[test]
fn listings_print_six_significant_digits_unless_asked() {
    // Source: issue 11, item 1 — shares, weights and intervals print with six
    // significant digits unless --precision asks for more; the digits are
    // those of printf("%.6g") (ISO C11 7.21.6.1).
    let scratch = Scratch::new();
    fit_model(&scratch);
    scratch.write(
        "new.jsonl",
        "{\"id\":\"n1\",\"text\":\"harbour tide quay boat seed\"}\n",
    );
    let tsv_fields = |args: &[&str]| -> Vec<String> {
        let output = themata(scratch.root()).args(args).output().unwrap();
        assert!(
            output.status.success(),
            "{args:?}: {}",
            String::from_utf8_lossy(&output.stderr)
        );
        String::from_utf8(output.stdout)
            .unwrap()
            .lines()
            .skip(1)
            .flat_map(|line| line.split('\t').map(str::to_string).collect::<Vec<_>>())
            .filter(|field| field.contains('.'))
            .collect()
    };
    let longest = |fields: &[String]| fields.iter().map(|f| significant_digits(f)).max().unwrap();
    for args in [
        &["show", "model", "--format", "tsv"][..],
        &["show", "model", "--documents", "--format", "tsv", "--all-topics"][..],
        &[
            "show",
            "model",
            "--documents",
            "--format",
            "tsv",
            "--layout",
            "wide",
        ][..],
        &["assign", "model", "new.jsonl", "--all-topics", "--quiet"][..],
    ] {
        let fields = tsv_fields(args);
        assert!(!fields.is_empty(), "{args:?}");
        assert!(longest(&fields) <= 6, "{args:?}: {fields:?}");
        let mut more = args.to_vec();
        more.extend(["--precision", "12"]);
        let fields = tsv_fields(&more);
        assert!(
            longest(&fields) > 6 && longest(&fields) <= 12,
            "{more:?}: {fields:?}"
        );
    }
    let json_digits = |args: &[&str]| -> usize {
        let output = themata(scratch.root()).args(args).output().unwrap();
        assert!(output.status.success(), "{args:?}");
        let mut numbers = Vec::new();
        match serde_json::from_slice::<Value>(&output.stdout) {
            Ok(value) => json_numbers(&value, &mut numbers),
            Err(_) => {
                for line in String::from_utf8(output.stdout).unwrap().lines() {
                    json_numbers(&serde_json::from_str(line).unwrap(), &mut numbers);
                }
            }
        }
        numbers
            .iter()
            .map(|x| significant_digits(&format!("{x:e}")))
            .max()
            .unwrap()
    };
    assert!(json_digits(&["show", "model", "--format", "json"]) <= 6);
    assert!(json_digits(&["show", "model", "--documents", "--format", "json"]) <= 6);
    assert!(json_digits(&["assign", "model", "new.jsonl", "--format", "jsonl", "--quiet"]) <= 6);
    assert!(json_digits(&["score", "model", "--heldout", "new.jsonl", "--format", "json"]) <= 6);
    assert!(json_digits(&["score", "model", "--format", "json", "--precision", "3"]) <= 3);
    themata(scratch.root())
        .args(["show", "model", "--precision", "18"])
        .assert()
        .code(BAD_INPUT)
        .stderr(predicate::str::contains("from 1 to 17"));
}

#[test]
fn document_listings_have_a_wide_view_and_a_threshold() {
    // Source: issue 11, item 2 and issue 15, item 4 — one row per document
    // (id, label, main topic, its share and interval, second topic, ...),
    // and a long view cut down by --min-share or --top, in show, assign and
    // the files run writes.
    let scratch = Scratch::new();
    run_config(&scratch, "");
    themata(scratch.root())
        .args(["run", "run.toml", "--quiet"])
        .assert()
        .success();
    let wide = std::fs::read_to_string(scratch.path("out/documents-wide.tsv")).unwrap();
    let mut lines = wide.lines();
    assert_eq!(
        lines.next().unwrap(),
        "document\tlabel\ttopic_1\tshare_1\tlow_1\thigh_1\ttopic_2\tshare_2\tlow_2\thigh_2\ttopic_3\tshare_3\tlow_3\thigh_3"
    );
    let rows: Vec<Vec<&str>> = lines.map(|l| l.split('\t').collect()).collect();
    assert_eq!(rows.len(), 12, "one row per document");
    for row in &rows {
        assert_eq!(row.len(), 14);
        let share = |slot: usize| row[3 + 4 * slot].parse::<f64>().ok();
        // Main topic first: shares fall from slot to slot.
        assert!(share(0).unwrap() >= share(1).unwrap_or(0.0), "{row:?}");
        let (low, high) = (row[4].parse::<f64>().unwrap(), row[5].parse::<f64>().unwrap());
        assert!(0.0 <= low && low <= high && high <= 1.0, "{row:?}");
    }
    // The long view lists only topics with a share of at least 0.01 (the
    // default), at least one per document.
    let long = std::fs::read_to_string(scratch.path("out/documents.tsv")).unwrap();
    let long_rows: Vec<Vec<&str>> = long.lines().skip(1).map(|l| l.split('\t').collect()).collect();
    assert!(long_rows.iter().all(|r| r[2].parse::<f64>().unwrap() >= 0.01));
    for row in &rows {
        assert!(long_rows.iter().any(|r| r[0] == row[0]), "{} missing", row[0]);
    }
    themata(scratch.root())
        .args([
            "fit",
            "out/corpus.bin",
            "-k",
            "3",
            "--iterations",
            "40",
            "--out",
            "m",
            "--quiet",
        ])
        .assert()
        .success();
    let show = |extra: &[&str]| -> Vec<Vec<String>> {
        let output = themata(scratch.root())
            .args(["show", "m", "--documents", "--format", "tsv"])
            .args(extra)
            .output()
            .unwrap();
        assert!(
            output.status.success(),
            "{}",
            String::from_utf8_lossy(&output.stderr)
        );
        String::from_utf8(output.stdout)
            .unwrap()
            .lines()
            .skip(1)
            .map(|l| l.split('\t').map(str::to_string).collect())
            .collect()
    };
    assert_eq!(show(&["--top", "1"]).len(), 12);
    assert_eq!(show(&["--top", "2"]).len(), 24);
    assert_eq!(show(&["--all-topics"]).len(), 36);
    assert!(
        show(&["--min-share", "0.2"])
            .iter()
            .all(|r| r[2].parse::<f64>().unwrap() >= 0.2)
    );
    let wide_two = show(&["--layout", "wide", "--top", "2"]);
    assert!(wide_two.iter().all(|r| r.len() == 2 + 4 * 2));
    themata(scratch.root())
        .args(["show", "m", "--documents", "--all-topics", "--top", "2"])
        .assert()
        .code(BAD_INPUT);
    scratch.write(
        "new.jsonl",
        "{\"id\":\"n1\",\"text\":\"harbour tide quay boat\"}\n",
    );
    let output = themata(scratch.root())
        .args([
            "assign",
            "m",
            "new.jsonl",
            "--layout",
            "wide",
            "--top",
            "2",
            "--quiet",
        ])
        .output()
        .unwrap();
    let text = String::from_utf8(output.stdout).unwrap();
    let lines: Vec<&str> = text.lines().collect();
    assert_eq!(lines.len(), 2, "{text}");
    assert!(lines[0].starts_with("document\tlabel\ttopic_1"), "{text}");
    assert!(lines[1].starts_with("n1\t\t"), "{text}");
    assert_eq!(lines[1].split('\t').count(), 2 + 4 * 2);
    // A config file sets the listing for the files run writes.
    run_config(&scratch, "");
    let config = std::fs::read_to_string(scratch.path("run.toml")).unwrap();
    scratch.write(
        "run.toml",
        format!("{config}\n[listing]\ntop = 1\nprecision = 3\n"),
    );
    themata(scratch.root())
        .args(["run", "run.toml", "--quiet"])
        .assert()
        .success();
    let long = std::fs::read_to_string(scratch.path("out/documents.tsv")).unwrap();
    assert_eq!(long.lines().count(), 1 + 12);
    assert!(
        long.lines()
            .skip(1)
            .all(|l| l.split('\t').skip(2).all(|f| significant_digits(f) <= 3))
    );
}

#[test]
fn assign_lists_main_topics_by_default_and_keeps_every_document() {
    // Source: issue 15, item 4 — by default, each document's topics with a
    // share of at least 0.01, with intervals; memory must not grow with the
    // number of documents, so assign keeps no table of ids and places a
    // document whose id repeats (issue 11, item 9: no document goes missing).
    let scratch = Scratch::new();
    fit_model(&scratch);
    scratch.write(
        "new.jsonl",
        "{\"id\":\"n1\",\"text\":\"harbour tide quay boat nets\"}\n{\"id\":\"n1\",\"text\":\"seed soil plot beans\"}\n",
    );
    let output = themata(scratch.root())
        .args(["assign", "model", "new.jsonl", "--quiet"])
        .output()
        .unwrap();
    assert!(output.status.success());
    let text = String::from_utf8(output.stdout).unwrap();
    let rows: Vec<Vec<&str>> = text.lines().skip(1).map(|l| l.split('\t').collect()).collect();
    assert!(
        rows.iter().all(|r| r[2].parse::<f64>().unwrap() >= 0.01),
        "{text}"
    );
    assert!(rows.len() < 2 * 3, "not every topic of both documents: {text}");
    assert!(rows.len() >= 2, "a row for each document: {text}");
    // Each listed topic's interval is the one --all-topics gives for it.
    let all = themata(scratch.root())
        .args(["assign", "model", "new.jsonl", "--quiet", "--all-topics"])
        .output()
        .unwrap();
    let all = String::from_utf8(all.stdout).unwrap();
    let all_rows: Vec<&str> = all.lines().skip(1).collect();
    assert_eq!(all_rows.len(), 2 * 3, "both documents placed: {all}");
    let listed: Vec<&str> = text.lines().skip(1).collect();
    for row in &listed {
        assert!(all_rows.contains(row), "{row} not in {all}");
    }
}

#[test]
fn build_reports_an_unterminated_csv_quote_with_its_line() {
    // Source: RFC 4180 §2.5-2.7 (a quoted field ends at its closing quote);
    // issue 11, item 3: the record that opens a quote never closed is a
    // skipped record with file and line, not a field that swallows the rest
    // of the file.
    let scratch = Scratch::new();
    scratch.write(
        "bad.csv",
        "id,text\n1,harbour boat fishing\n2,harbour boat net\n3,\"unterminated harbour boat\n4,fine text here harbour\n",
    );
    themata(scratch.root())
        .args([
            "build",
            "bad.csv",
            "--out",
            "x",
            "--min-docs",
            "1",
            "--max-doc-share",
            "1",
        ])
        .assert()
        .success()
        .stdout(predicate::str::contains(
            "3 read, 2 kept, 1 skipped (bad_record 1)",
        ))
        .stderr(predicate::str::contains("bad.csv:4:").and(predicate::str::contains("never closed")));
}

#[test]
fn build_says_why_when_every_document_is_skipped() {
    // Source: issue 11, item 4 — when nothing is left, the same per-reason
    // summary and first examples as on success, pruning included (how many
    // words each rule removed).
    let scratch = Scratch::new();
    for idx in 1..=3 {
        scratch.write(
            &format!("docs/{idx}.txt"),
            format!("unique{idx} words{idx} here{idx}"),
        );
    }
    scratch.write("docs/blank.txt", "  \n");
    themata(scratch.root())
        .args(["build", "docs", "--out", "c.bin", "--quiet"])
        .assert()
        .code(BAD_INPUT)
        .stderr(predicate::str::contains(
            "4 read, 0 kept, 4 skipped: empty 1, no_tokens 3; 0 of 9 tokens kept; vocabulary 0 of 9 words seen, dropped: 9 too rare, 0 too common",
        ))
        .stderr(predicate::str::contains("skipped: docs/blank.txt"))
        .stderr(predicate::str::contains("`docs/1.txt` has no words left after vocabulary pruning"));
    assert!(!scratch.path("c.bin").exists());
}

#[test]
fn quiet_run_prints_no_skipped_documents_and_keeps_them_in_build_json() {
    // Source: issue 11, item 11 — quiet means quiet, with the counts in the
    // files.
    let scratch = Scratch::new();
    run_config(&scratch, "");
    scratch.write("docs/blank.txt", "   ");
    let output = themata(scratch.root())
        .args(["run", "run.toml", "--quiet"])
        .output()
        .unwrap();
    assert!(output.status.success());
    assert!(
        output.stderr.is_empty(),
        "{}",
        String::from_utf8_lossy(&output.stderr)
    );
    let build = read_json(&scratch.path("out/build.json"));
    assert_eq!(build["skipped"]["empty"], 1);
    assert_eq!(build["diagnostics"].as_array().unwrap().len(), 1);
    // Without --quiet the skipped document is listed.
    themata(scratch.root())
        .args(["run", "run.toml"])
        .assert()
        .success()
        .stderr(predicate::str::contains("blank.txt"));
}

#[test]
fn every_command_that_prints_ends_quietly_on_a_closed_pipe() {
    // Source: issue 11, item 6 — `themata score DIR | head -1` must not
    // panic; the reader of standard output goes away before the command
    // prints (pipe(7): writes then fail with EPIPE), and every command ends
    // with exit 0 and nothing on stderr but its usual messages.
    let scratch = Scratch::new();
    fit_model(&scratch);
    run_config(&scratch, "");
    scratch.write(
        "new.jsonl",
        "{\"id\":\"n1\",\"text\":\"harbour tide quay boat\"}\n",
    );
    let commands: [&[&str]; 10] = [
        &["build", "docs", "--out", "again.bin", "--min-docs", "1"],
        &[
            "fit",
            "corpus.bin",
            "-k",
            "3",
            "--iterations",
            "20",
            "--out",
            "m2",
        ],
        &["show", "model"],
        &["show", "model", "--documents", "--format", "tsv"],
        &["run", "run.toml"],
        &["assign", "model", "new.jsonl"],
        &["score", "model"],
        &["score", "model", "--format", "json"],
        &[
            "sweep",
            "corpus.bin",
            "--topics",
            "2,3",
            "--seeds",
            "1",
            "--iterations",
            "20",
            "--out",
            "sw",
        ],
        &["bench", "--quick"],
    ];
    for args in commands {
        let mut child = std::process::Command::new(assert_cmd::cargo::cargo_bin("themata"))
            .current_dir(scratch.root())
            .args(args)
            .stdout(std::process::Stdio::piped())
            .stderr(std::process::Stdio::piped())
            .spawn()
            .unwrap();
        drop(child.stdout.take());
        let output = child.wait_with_output().unwrap();
        let stderr = String::from_utf8_lossy(&output.stderr);
        assert_eq!(output.status.code(), Some(0), "{args:?}: {stderr}");
        assert!(
            !stderr.contains("panicked") && !stderr.contains("Broken pipe"),
            "{args:?}: {stderr}"
        );
    }
}

#[test]
fn help_and_messages_name_the_right_flags_and_fields() {
    // Source: issue 11, item 7 — help lists only what a command accepts,
    // messages name the flag the command has, count in words ("1 thread"),
    // carry no Rust type names, and a named field no record has is warned
    // about once (a text field fails).
    let scratch = Scratch::new();
    fit_model(&scratch);
    let help = themata(scratch.root())
        .args(["score", "--help"])
        .output()
        .unwrap();
    let help = String::from_utf8(help.stdout).unwrap();
    assert!(
        help.contains("table") && help.contains("json") && !help.contains("tsv"),
        "{help}"
    );
    themata(scratch.root())
        .args(["score", "model", "--format", "tsv"])
        .assert()
        .code(BAD_INPUT);
    scratch.write("notes.rtf", "harbour tide");
    themata(scratch.root())
        .args(["assign", "model", "notes.rtf"])
        .assert()
        .code(BAD_INPUT)
        .stdout(predicate::str::is_empty())
        .stderr(predicate::str::contains("pass --input-format text|jsonl|csv"));
    for args in [
        &[
            "sweep",
            "corpus.bin",
            "--topics",
            "2",
            "--seeds",
            "x",
            "--out",
            "s",
        ][..],
        &["score", "model", "--particles", "many"][..],
        &["fit", "corpus.bin", "-k", "2", "--seed=-1", "--out", "m"][..],
    ] {
        themata(scratch.root())
            .args(args)
            .assert()
            .code(BAD_INPUT)
            .stderr(predicate::str::contains("is not a whole number"))
            .stderr(predicate::str::contains("invalid digit").not());
    }
    themata(scratch.root())
        .args([
            "sweep",
            "corpus.bin",
            "--topics",
            "2",
            "--seeds",
            "1",
            "--threads",
            "1",
        ])
        .args(["--iterations", "10", "--out", "s"])
        .assert()
        .success()
        .stderr(predicate::str::contains("1 candidate x 1 seed on 1 thread"));
    scratch.write("one.jsonl", "{\"id\":\"n1\",\"body\":\"harbour tide quay\"}\n");
    themata(scratch.root())
        .args(["assign", "model", "one.jsonl", "--text-field", "body"])
        .assert()
        .success()
        .stderr(predicate::str::contains("assigned 1 document: 3 tokens known"));
    // A named label field no record has: one warning. A text field no record
    // has: a failure that lists the fields there are.
    scratch.write(
        "two.jsonl",
        "{\"id\":\"a\",\"body\":\"harbour tide quay\"}\n{\"id\":\"b\",\"body\":\"seed soil plot\"}\n",
    );
    let output = themata(scratch.root())
        .args([
            "build",
            "two.jsonl",
            "--out",
            "two.bin",
            "--text-field",
            "body",
            "--label-field",
            "theme",
        ])
        .args(["--min-docs", "1", "--max-doc-share", "1"])
        .output()
        .unwrap();
    assert!(output.status.success());
    let stderr = String::from_utf8(output.stderr).unwrap();
    assert_eq!(
        stderr
            .matches("warning: no record of any input has the label field `theme`")
            .count(),
        1,
        "{stderr}"
    );
    themata(scratch.root())
        .args(["build", "two.jsonl", "--out", "two.bin"])
        .assert()
        .code(BAD_INPUT)
        .stderr(predicate::str::contains(
            "no record has the text field `text` (fields seen: `id`, `body`)",
        ));
    // The label field left at its default is not warned about.
    themata(scratch.root())
        .args([
            "build",
            "two.jsonl",
            "--out",
            "two.bin",
            "--text-field",
            "body",
            "--min-docs",
            "1",
        ])
        .args(["--max-doc-share", "1"])
        .assert()
        .success()
        .stderr(predicate::str::contains("warning").not());
}

#[test]
fn stemmed_topics_show_the_words_people_wrote() {
    // Source: issue 11, item 8 — with --stem english the Snowball stems of
    // "cattle", "committee" and "ordinances" are "cattl", "committe" and
    // "ordin" (Porter 2 stemmer, snowballstem.org); listings show the most
    // frequent word behind each stem, while the stem stays the key (a new
    // document's "ordinance" still counts as the same word).
    let scratch = Scratch::new();
    let texts = [
        "cattle grazing cattle farmers ordinances committee",
        "committee ordinances council cattle committee",
        "ordinances ordinance committee cattle grazing",
    ];
    for (idx, text) in texts.iter().cycle().take(9).enumerate() {
        scratch.write(&format!("docs/{idx}.txt"), text);
    }
    themata(scratch.root())
        .args([
            "build",
            "docs",
            "--out",
            "c.bin",
            "--stem",
            "english",
            "--min-docs",
            "1",
        ])
        .args(["--max-doc-share", "1", "--quiet"])
        .assert()
        .success();
    themata(scratch.root())
        .args([
            "fit",
            "c.bin",
            "-k",
            "1",
            "--iterations",
            "20",
            "--out",
            "m",
            "--quiet",
        ])
        .assert()
        .success();
    let output = themata(scratch.root())
        .args(["show", "m", "--format", "tsv", "--words", "all"])
        .output()
        .unwrap();
    let text = String::from_utf8(output.stdout).unwrap();
    let words: Vec<&str> = text
        .lines()
        .skip(1)
        .map(|l| l.split('\t').nth(2).unwrap())
        .collect();
    for shown in ["cattle", "committee", "ordinances", "grazing"] {
        assert!(words.contains(&shown), "{shown} missing from {words:?}");
    }
    for stem in ["cattl", "committe", "ordin"] {
        assert!(!words.contains(&stem), "{stem} shown in {words:?}");
    }
    scratch.write("new.jsonl", "{\"id\":\"n\",\"text\":\"ordinance cattle\"}\n");
    themata(scratch.root())
        .args(["assign", "m", "new.jsonl"])
        .assert()
        .success()
        .stderr(predicate::str::contains("2 tokens known, 0 tokens unknown"));
    // Source: a model of one topic gives every document the share 1 with
    // certainty (the Dirichlet of one category is the point mass at 1); its
    // listings used to fail on the degenerate interval.
    let output = themata(scratch.root())
        .args(["show", "m", "--documents", "--format", "tsv"])
        .output()
        .unwrap();
    assert!(
        output.status.success(),
        "{}",
        String::from_utf8_lossy(&output.stderr)
    );
    let text = String::from_utf8(output.stdout).unwrap();
    assert!(
        text.lines().skip(1).all(|l| l.ends_with("\t0\t1\t1\t1")),
        "{text}"
    );
}

#[test]
fn a_file_has_the_same_id_whether_its_folder_or_itself_is_given() {
    // Source: issue 11, item 9 — document ids from a folder must not depend
    // on whether the folder or a file in it was passed.
    let scratch = Scratch::new();
    fit_model(&scratch);
    let first_id = |input: &str| -> String {
        let output = themata(scratch.root())
            .args(["assign", "model", input, "--top", "1", "--quiet"])
            .output()
            .unwrap();
        assert!(
            output.status.success(),
            "{}",
            String::from_utf8_lossy(&output.stderr)
        );
        let text = String::from_utf8(output.stdout).unwrap();
        text.lines()
            .nth(1)
            .unwrap()
            .split('\t')
            .next()
            .unwrap()
            .to_string()
    };
    assert_eq!(first_id("docs"), "docs/item-00.txt");
    assert_eq!(first_id("docs/item-00.txt"), "docs/item-00.txt");
    assert_eq!(first_id("./docs/"), "docs/item-00.txt");
}

#[test]
fn sweep_says_when_the_best_k_may_lie_outside_the_candidates() {
    // Source: issue 11, item 10 — with two candidates the recommendation is
    // always one end of the range, so the warning must appear, and the
    // summary records which end.
    let scratch = Scratch::new();
    build_corpus(&scratch);
    let output = themata(scratch.root())
        .args([
            "sweep",
            "corpus.bin",
            "--topics",
            "2,3",
            "--seeds",
            "1",
            "--iterations",
            "30",
        ])
        .args(["--holdout", "0.25", "--out", "sweep"])
        .output()
        .unwrap();
    assert!(output.status.success());
    let stderr = String::from_utf8(output.stderr).unwrap();
    let report = read_json(&scratch.path("sweep/summary.json"));
    let edge = report["recommended_at_edge"].as_str().unwrap();
    let expected = if edge == "largest" {
        "the recommended K is the largest candidate; the best K may be larger"
    } else {
        "the recommended K is the smallest candidate; fewer topics may do as well"
    };
    assert!(stderr.contains(expected), "{edge}: {stderr}");
    let recommended = report["recommended_topics"].as_u64().unwrap();
    assert_eq!(recommended, if edge == "largest" { 3 } else { 2 });
}

/// The bars corpus as JSON Lines text, with a label per document.
fn bars_as_json_lines(scratch: &Scratch, documents: usize) {
    let data = themata::testbed::synthetic::bars(documents, 60, 1.0, 9);
    let corpus = &data.corpus;
    let mut text = String::new();
    for doc_idx in 0..corpus.n_docs() {
        let words: Vec<&str> = corpus
            .doc_tokens(doc_idx)
            .iter()
            .map(|&word| corpus.vocabulary.word(word))
            .collect();
        text.push_str(
            &serde_json::json!({
                "id": format!("d{doc_idx}"),
                "text": words.join(" "),
                "label": format!("group-{}", doc_idx % 4),
            })
            .to_string(),
        );
        text.push('\n');
    }
    scratch.write("bars.jsonl", text);
    scratch.write(
        "bars.toml",
        "[input]\npaths = [\"bars.jsonl\"]\n[tokenizer]\nstopwords = \"none\"\nmin_length = 1\n\
         [vocabulary]\nmin_docs = 1\nmax_doc_share = 1\n\
         [fit]\ntopics = 10\niterations = 1500\nburn_in = 200\nsamples = 3\nlag = 7\nseed = 12\nthreads = 1\ncheckpoint_every = 25\n\
         [output]\ndir = \"whole\"\n",
    );
}

#[test]
fn an_interrupted_run_finishes_from_its_checkpoint() {
    // Source: issue 11, item 11 — `run` gets the checkpoint key; a checkpoint
    // holds the complete sampler state, so running the same config again
    // after a crash finishes to the bytes of an uninterrupted run (as `fit
    // --resume` does), and a checkpoint of other settings is not used.
    let scratch = Scratch::new();
    bars_as_json_lines(&scratch, 1500);
    themata(scratch.root())
        .args(["run", "bars.toml", "--quiet"])
        .assert()
        .success();
    assert!(!scratch.path("whole.checkpoint").exists());
    let start_killed = || {
        let mut child = std::process::Command::new(assert_cmd::cargo::cargo_bin("themata"))
            .current_dir(scratch.root())
            .args(["run", "bars.toml", "--quiet", "--out", "killed"])
            .stdout(std::process::Stdio::null())
            .stderr(std::process::Stdio::null())
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
        // A finished run removes its checkpoint.
        assert!(
            checkpoint.exists(),
            "the run finished before it was killed; make it longer"
        );
    };
    start_killed();
    // Other settings: the checkpoint is not theirs.
    themata(scratch.root())
        .args([
            "run",
            "bars.toml",
            "--out",
            "killed",
            "--seed",
            "13",
            "--iterations",
            "30",
            "--burn-in",
            "5",
        ])
        .args(["--checkpoint-every", "1000"])
        .assert()
        .success()
        .stderr(predicate::str::contains(
            "was written by a run of other inputs or settings",
        ));
    start_killed();
    themata(scratch.root())
        .args(["run", "bars.toml", "--out", "killed"])
        .assert()
        .success()
        .stderr(predicate::str::contains("resuming from"));
    assert!(!scratch.path("killed.checkpoint").exists());
    assert!(
        std::fs::read(scratch.path("whole/model.bin")).unwrap()
            == std::fs::read(scratch.path("killed/model.bin")).unwrap(),
        "the resumed run's model differs from the uninterrupted one"
    );
    // Source: issue 11, item 11 — the label agreement run prints is saved in
    // summary.json (NMI is between 0 and 1, Strehl & Ghosh 2002).
    let summary = read_json(&scratch.path("whole/summary.json"));
    let agreement = &summary["label_agreement"];
    assert_eq!(agreement["documents"], 1500);
    assert_eq!(agreement["labels"], 4);
    let nmi = agreement["nmi"].as_f64().unwrap();
    assert!((0.0..=1.0).contains(&nmi), "{agreement}");
}

#[test]
fn tabs_and_line_breaks_in_file_names_stay_inside_their_tsv_field() {
    // Source: IANA media type text/tab-separated-values (a field holds no
    // tab or line break); issue 11, item 11: such names are escaped as
    // PostgreSQL's text format does (\t, \n, \r, \\).
    let scratch = Scratch::new();
    run_config(&scratch, "");
    scratch.write(
        "docs/odd\tname\nhere.txt",
        "tide quay harbour boat nets trawler catch",
    );
    themata(scratch.root())
        .args(["run", "run.toml", "--quiet"])
        .assert()
        .success();
    for (file, columns) in [("out/documents.tsv", 5), ("out/documents-wide.tsv", 14)] {
        let text = std::fs::read_to_string(scratch.path(file)).unwrap();
        assert!(text.contains("docs/odd\\tname\\nhere.txt\t"), "{text}");
        for line in text.lines() {
            assert_eq!(line.split('\t').count(), columns, "{file}: {line}");
        }
    }
}

#[test]
fn score_help_explains_every_column_of_its_table() {
    // Source: issue 11, item 12 — the columns of score's per-topic table are
    // explained in --help (and the README).
    let scratch = Scratch::new();
    fit_model(&scratch);
    let table = themata(scratch.root()).args(["score", "model"]).output().unwrap();
    let table = String::from_utf8(table.stdout).unwrap();
    let header = table
        .lines()
        .find(|l| l.trim_start().starts_with("topic"))
        .unwrap();
    let help = themata(scratch.root())
        .args(["score", "--help"])
        .output()
        .unwrap();
    let help = String::from_utf8(help.stdout).unwrap();
    let readme =
        std::fs::read_to_string(std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("README.md")).unwrap();
    for column in header
        .split_whitespace()
        .filter(|c| !["topic", "top", "words"].contains(c))
    {
        assert!(
            help.lines()
                .any(|l| l.trim_start().starts_with(&format!("{column} "))),
            "`{column}` is not explained in score --help:\n{help}"
        );
        assert!(
            readme.contains(&format!("| `{column}`")),
            "`{column}` is not in the README table"
        );
    }
}

#[test]
fn long_documents_are_flagged_and_can_be_cut_into_chunks() {
    // Source: issue 11, item 5 — a document holding most tokens is warned
    // about; --split-every N cuts chunks named after their document, shares
    // are listed per chunk and, with --merge-chunks, summed back per
    // document.
    let scratch = Scratch::new();
    text_folder(&scratch);
    let long = "tide quay harbour boat nets trawler catch ".repeat(40);
    scratch.write("docs/zz-long.txt", &long);
    themata(scratch.root())
        .args(["build", "docs", "--out", "c.bin", "--min-docs", "1"])
        .assert()
        .success()
        .stderr(predicate::str::contains("document `docs/zz-long.txt` holds"))
        .stderr(predicate::str::contains("--split-every"));
    run_config(&scratch, "");
    scratch.write("docs/zz-long.txt", &long);
    let config = std::fs::read_to_string(scratch.path("run.toml")).unwrap();
    let config = config.replace("[input]\n", "[input]\nsplit_every = 100\n");
    scratch.write("run.toml", config);
    themata(scratch.root())
        .args(["run", "run.toml", "--quiet"])
        .assert()
        .success();
    let long_rows = std::fs::read_to_string(scratch.path("out/documents-wide.tsv")).unwrap();
    let ids: Vec<&str> = long_rows
        .lines()
        .skip(1)
        .map(|l| l.split('\t').next().unwrap())
        .collect();
    assert!(
        ids.contains(&"docs/zz-long.txt#1") && ids.contains(&"docs/zz-long.txt#3"),
        "{ids:?}"
    );
    assert_eq!(ids.len(), 12 + 3, "280 tokens in chunks of 100: three chunks");
    let merged = themata(scratch.root())
        .args([
            "show",
            "out",
            "--documents",
            "--layout",
            "wide",
            "--format",
            "tsv",
            "--merge-chunks",
        ])
        .output()
        .unwrap();
    let merged = String::from_utf8(merged.stdout).unwrap();
    let merged_ids: Vec<&str> = merged
        .lines()
        .skip(1)
        .map(|l| l.split('\t').next().unwrap())
        .collect();
    assert_eq!(merged_ids.len(), 13);
    assert!(merged_ids.contains(&"docs/zz-long.txt"), "{merged_ids:?}");
    let build = read_json(&scratch.path("out/build.json"));
    assert_eq!(build["documents_split"], 1);
    scratch.write("new.jsonl", "{\"id\":\"n\",\"text\":\"harbour tide\"}\n");
    themata(scratch.root())
        .args(["assign", "out", "new.jsonl", "--merge-chunks"])
        .assert()
        .code(BAD_INPUT)
        .stderr(predicate::str::contains("nothing to merge"));
}

#[cfg(not(feature = "mpi"))]
#[test]
fn a_build_without_mpi_refuses_to_run_as_one_of_several_ranks() {
    // Source: Open MPI's documentation — mpirun sets OMPI_COMM_WORLD_SIZE in
    // each rank's environment. Without the feature, R copies of the command
    // would each fit the whole model into one folder; it must refuse instead.
    let scratch = Scratch::new();
    let output = themata(scratch.root())
        .env("OMPI_COMM_WORLD_SIZE", "2")
        .args(["fit", "corpus.bin", "--out", "out", "--topics", "3"])
        .output()
        .unwrap();
    assert_eq!(output.status.code(), Some(2));
    let stderr = String::from_utf8_lossy(&output.stderr);
    assert!(
        stderr.contains("built without MPI") && stderr.contains("--features mpi"),
        "{stderr}"
    );
    assert!(!scratch.path("out").exists());
}
