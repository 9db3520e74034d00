//! Hardening: the fuzz targets' property-test twins and their regression
//! inputs, damaged checkpoints, the README's bad-input table (one test per
//! row), the document size limit, and failing disks (read-only and full
//! mounts, a full standard output, inputs removed or growing mid-run).

use std::io::Write;
use std::path::{Path, PathBuf};
use std::process::{Command as Process, Stdio};

use predicates::prelude::*;
use proptest::prelude::*;
use themata::fitting::fit::{self, FitSettings, PriorSpec};
use themata::model::Model;
use themata::model::format::FileKind;
use themata::testbed::fuzz_checks;
use themata::testbed::synthetic;

use crate::util::{Scratch, themata};

const BAD_INPUT: i32 = 2;
const SYSTEM: i32 = 3;

/// The repository's root (the crate's manifest folder).
fn repository() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

/// The check of one fuzz target.
type Check = fn(&[u8]);

/// The fuzz targets by name, each with its check.
const TARGETS: [(&str, Check); 8] = [
    ("json_lines", fuzz_checks::json_lines),
    ("csv_table", fuzz_checks::csv_table),
    ("text_file", fuzz_checks::text_file),
    ("tokenizer", fuzz_checks::tokenizer),
    ("corpus_file", fuzz_checks::corpus_file),
    ("model_file", fuzz_checks::model_file),
    ("run_config", fuzz_checks::run_config),
    ("names_file", fuzz_checks::names_file),
];

/// The files of `folder`, sorted (none when it does not exist).
fn files_in(folder: &Path) -> Vec<PathBuf> {
    let mut files: Vec<PathBuf> = std::fs::read_dir(folder)
        .map(|entries| {
            entries
                .filter_map(|entry| entry.ok().map(|entry| entry.path()))
                .collect()
        })
        .unwrap_or_default();
    files.retain(|path| path.is_file());
    files.sort();
    files
}

#[test]
fn the_inputs_the_fuzzers_found_stay_fixed() {
    // Source: common practice (a crash a fuzzer found becomes a regression
    // test). Every minimised input under tests/fuzz-regressions/TARGET/ is
    // run through the check of TARGET; a folder for an unknown target is a
    // mistake in the tree.
    let root = repository().join("tests/fuzz-regressions");
    let mut run = 0;
    for folder in std::fs::read_dir(&root).expect("tests/fuzz-regressions exists") {
        let folder = folder.unwrap().path();
        if !folder.is_dir() {
            continue;
        }
        let name = folder.file_name().unwrap().to_string_lossy().into_owned();
        let check = TARGETS
            .iter()
            .find(|(target, _)| *target == name)
            .unwrap_or_else(|| panic!("tests/fuzz-regressions/{name}: no such fuzz target"))
            .1;
        for file in files_in(&folder) {
            check(&std::fs::read(&file).unwrap());
            run += 1;
        }
    }
    assert!(run > 0, "no regression inputs found under {}", root.display());
}

#[test]
fn the_fuzz_seeds_pass_their_checks() {
    // Source: common practice (the seeds are valid inputs of each kind;
    // a check that refused them would make the fuzzer start blind).
    for (target, check) in TARGETS {
        let seeds = files_in(&repository().join("fuzz/seeds").join(target));
        assert!(!seeds.is_empty(), "fuzz/seeds/{target} is empty");
        for seed in seeds {
            check(&std::fs::read(seed).unwrap());
        }
    }
}

/// The seeds of `target`, read.
fn seeds(target: &str) -> Vec<Vec<u8>> {
    files_in(&repository().join("fuzz/seeds").join(target))
        .iter()
        .map(|path| std::fs::read(path).unwrap())
        .collect()
}

/// Bytes for a property test of `target`: one of its seeds with a few
/// bytes changed, inserted or cut, or plain random bytes. Changed seeds
/// reach far deeper than random bytes (past the header, into records).
fn mutated_seeds(target: &'static str) -> impl Strategy<Value = Vec<u8>> {
    let seeds = seeds(target);
    let count = seeds.len();
    prop_oneof![
        4 => (0..count, prop::collection::vec((any::<prop::sample::Index>(), any::<u8>(), 0..3u8), 1..6), any::<prop::sample::Index>())
            .prop_map(move |(pick, edits, cut)| {
                let mut bytes = seeds[pick].clone();
                for (at, value, how) in edits {
                    if bytes.is_empty() {
                        bytes.push(value);
                        continue;
                    }
                    let at = at.index(bytes.len());
                    match how {
                        0 => bytes[at] = value,
                        1 => bytes.insert(at, value),
                        _ => { bytes.remove(at); }
                    }
                }
                if cut.index(8) == 0 {
                    let keep = cut.index(bytes.len() + 1);
                    bytes.truncate(keep);
                }
                bytes
            }),
        1 => prop::collection::vec(any::<u8>(), 0..300),
    ]
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 300, failure_persistence: None, ..ProptestConfig::default() })]

    // Source: the same checks the fuzz targets run (themata::testbed::fuzz_checks);
    // a few hundred cases each, so every CI run exercises them.
    #[test]
    fn property_json_lines(bytes in mutated_seeds("json_lines")) { fuzz_checks::json_lines(&bytes) }

    #[test]
    fn property_csv_table(bytes in mutated_seeds("csv_table")) { fuzz_checks::csv_table(&bytes) }

    #[test]
    fn property_text_file(bytes in mutated_seeds("text_file")) { fuzz_checks::text_file(&bytes) }

    #[test]
    fn property_tokenizer(bytes in mutated_seeds("tokenizer")) { fuzz_checks::tokenizer(&bytes) }

    #[test]
    fn property_corpus_file(bytes in mutated_seeds("corpus_file")) { fuzz_checks::corpus_file(&bytes) }

    #[test]
    fn property_model_file(bytes in mutated_seeds("model_file")) { fuzz_checks::model_file(&bytes) }

    #[test]
    fn property_run_config(bytes in mutated_seeds("run_config")) { fuzz_checks::run_config(&bytes) }

    #[test]
    fn property_names_file(bytes in mutated_seeds("names_file")) { fuzz_checks::names_file(&bytes) }
}

#[test]
fn a_valid_payload_in_a_valid_header_round_trips_through_the_checks() {
    // Source: common practice (the framing the fuzz targets build must be
    // the file format's own, or the payload decoder is never reached): the
    // committed fixtures, unframed and framed again, load.
    for (name, kind) in [
        ("corpus-v1.bin", FileKind::Corpus),
        ("corpus-v2.bin", FileKind::Corpus),
        ("model-v1.bin", FileKind::Model),
        ("model-v2.bin", FileKind::Model),
        ("model-v3.bin", FileKind::Model),
    ] {
        let image = std::fs::read(repository().join("tests/fixtures").join(name)).unwrap();
        let bytes = fuzz_checks::unframe(kind, &image).unwrap();
        assert_eq!(fuzz_checks::frame(kind, &bytes), image, "{name}");
    }
}

/// A checkpoint as `fit --checkpoint-every` writes it: the model part way
/// (sweep 7 of 12, after one posterior sample), encoded.
fn checkpoint_image() -> Vec<u8> {
    let data = synthetic::two_topics(5);
    let settings = FitSettings {
        burn_in: 2,
        alpha: PriorSpec::Learn,
        samples: 3,
        lag: 3,
        trace_every: 2,
        ..FitSettings::fixed(2, 12, 0.1, 0.1, 9)
    };
    let mut model = fit::start(data.corpus, &settings).unwrap();
    fit::run_to_target(&mut model, &mut |_| {}, &mut |model| {
        if model.iterations_done == 7 {
            std::ops::ControlFlow::Break(())
        } else {
            std::ops::ControlFlow::Continue(())
        }
    })
    .unwrap();
    assert_eq!((model.iterations_done, model.target), (7, 12));
    assert_eq!(model.samples.len(), 1, "the checkpoint holds a sample");
    model.encode(Path::new("m.checkpoint")).unwrap()
}

#[test]
fn every_single_byte_change_and_every_truncation_of_a_checkpoint_is_refused() {
    // Source: CRC-32 detects every error burst of up to 32 bits (Peterson &
    // Brown 1961; common practice). A checkpoint is a model file written
    // part way (iterations done below the target, fewer samples than asked
    // for), a state the finished model of the model-file test never is;
    // every value of every byte is tried and none may load or panic.
    let bytes = checkpoint_image();
    let path = Path::new("m.checkpoint");
    for position in 0..bytes.len() {
        for value in 0..=255u8 {
            if value == bytes[position] {
                continue;
            }
            let mut changed = bytes.clone();
            changed[position] = value;
            let error = Model::decode(changed, path).err();
            let error = error.unwrap_or_else(|| panic!("byte {position} set to {value} loaded"));
            assert!(error.is_bad_input(), "{error}");
        }
    }
    for cut in 0..bytes.len() {
        let error = Model::decode(bytes[..cut].to_vec(), path).err();
        assert!(
            error.is_some_and(|error| error.is_bad_input()),
            "cut at {cut} loaded"
        );
    }
    let model = Model::decode(bytes, path).unwrap();
    assert_eq!(model.iterations_done, 7);
}

// ---------------------------------------------------------------------------
// The README's bad-input table, one test per row.

/// Documents whose words survive the pruning options `KEEP_ALL`.
const KEEP_ALL: [&str; 4] = ["--min-docs", "1", "--max-doc-share", "1"];

/// `themata build INPUT --out corpus.bin` with every word kept.
fn build(scratch: &Scratch, input: &str) -> assert_cmd::assert::Assert {
    themata(scratch.root())
        .args(["build", input, "--out", "corpus.bin"])
        .args(KEEP_ALL)
        .assert()
}

/// The ids of the documents of the corpus file `corpus.bin`.
fn corpus_ids(scratch: &Scratch) -> Vec<String> {
    let corpus = themata::model::corpus_file::load_corpus(&scratch.path("corpus.bin")).unwrap();
    corpus
        .documents
        .iter()
        .map(|document| document.id.clone())
        .collect()
}

#[test]
fn bad_input_invalid_utf8_is_skipped_with_its_file_and_line() {
    // Source: RFC 3629 (0xFF never appears in UTF-8).
    let scratch = Scratch::new();
    scratch.write(
        "in.jsonl",
        b"{\"id\":\"a\",\"text\":\"tide quay\"}\n{\"id\":\"b\",\"text\":\"caf\xff harbour\"}\n{\"id\":\"c\",\"text\":\"soil seed\"}\n",
    );
    scratch.write("in.csv", b"id,text\nd,tide quay\ne,caf\xff harbour\n");
    scratch.write("in.txt", b"tide \xfe quay\n");
    build(&scratch, "in.jsonl")
        .success()
        .stderr(predicate::str::contains(
            "in.jsonl:2: line is not valid UTF-8 (first bad byte at column 22)",
        ));
    assert_eq!(corpus_ids(&scratch), ["a", "c"]);
    build(&scratch, "in.csv")
        .success()
        .stderr(predicate::str::contains(
            "in.csv:3: field `text` is not valid UTF-8",
        ));
    build(&scratch, "in.txt")
        .code(BAD_INPUT)
        .stderr(predicate::str::contains(
            "document `in.txt` is not valid UTF-8 (first bad byte at byte offset 5)",
        ));
    themata(scratch.root())
        .args(["build", "in.jsonl", "--out", "corpus.bin", "--strict"])
        .args(KEEP_ALL)
        .assert()
        .code(BAD_INPUT);
}

#[test]
fn bad_input_nul_bytes_separate_words() {
    // Source: Unicode UAX #29 (U+0000 is a control character, so a word
    // boundary on both sides); JSON's `\u0000` escape (RFC 8259 §7) and a
    // raw NUL in a text file or CSV field give the same words.
    let scratch = Scratch::new();
    scratch.write("a.txt", b"tide\0quay harbour\0\0soil\n");
    scratch.write(
        "b.jsonl",
        "{\"id\":\"j\",\"text\":\"tide\\u0000quay harbour\\u0000soil\"}\n",
    );
    scratch.write("c.csv", b"id,text\nk,tide\0quay harbour\0soil\n");
    for input in ["a.txt", "b.jsonl", "c.csv"] {
        build(&scratch, input).success();
        let corpus = themata::model::corpus_file::load_corpus(&scratch.path("corpus.bin")).unwrap();
        let mut words: Vec<&str> = (0..corpus.vocabulary.len() as u32)
            .map(|w| corpus.vocabulary.word(w))
            .collect();
        words.sort_unstable();
        assert_eq!(words, ["harbour", "quay", "soil", "tide"], "{input}");
    }
}

/// Runs `themata build - --format jsonl` on standard input written by
/// `write` (streamed, never held whole), with `extra` options; returns
/// (exit code, standard error).
fn build_streamed(
    scratch: &Scratch,
    extra: &[&str],
    write: impl FnOnce(&mut dyn Write) -> std::io::Result<()> + Send + 'static,
) -> (i32, String) {
    let binary = assert_cmd::cargo::cargo_bin("themata");
    let mut child = Process::new(binary)
        .current_dir(scratch.root())
        .args(["build", "-", "--out", "corpus.bin"])
        .args(KEEP_ALL)
        .args(extra)
        .stdin(Stdio::piped())
        .stdout(Stdio::null())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    let mut stdin = child.stdin.take().unwrap();
    let writer = std::thread::spawn(move || {
        let mut buffered = std::io::BufWriter::with_capacity(1 << 20, &mut stdin);
        let _ = write(&mut buffered).and_then(|()| buffered.flush());
    });
    let output = child.wait_with_output().unwrap();
    writer.join().unwrap();
    (
        output.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&output.stderr).into_owned(),
    )
}

#[test]
fn bad_input_a_200_mb_single_line_is_skipped_and_the_rest_is_read() {
    // Source: common practice (a per-record size limit, as log shippers
    // and HTTP servers have). 200 MB of one JSON line, streamed through a
    // pipe, is over the default limit (32 MiB): skipped with its line,
    // without holding it (the memory figure is in the README, measured by
    // scripts/memory-bounds.sh), and the documents around it are kept.
    let scratch = Scratch::new();
    let (code, stderr) = build_streamed(&scratch, &[], |out| {
        out.write_all(b"{\"id\":\"before\",\"text\":\"tide quay\"}\n{\"id\":\"huge\",\"text\":\"")?;
        let chunk = "harbour ".repeat(128 * 1024);
        for _ in 0..(200 << 20) / chunk.len() {
            out.write_all(chunk.as_bytes())?;
        }
        out.write_all(b"\"}\n{\"id\":\"after\",\"text\":\"soil seed\"}\n")
    });
    assert_eq!(code, 0, "{stderr}");
    assert!(
        stderr.contains("<stdin>:2: the record on this line is longer than 33554432 bytes and is skipped"),
        "{stderr}"
    );
    assert_eq!(corpus_ids(&scratch), ["before", "after"]);
}

#[test]
fn bad_input_a_document_over_the_limit_is_skipped_in_every_format() {
    // Source: common practice (the limit counts the bytes of the file, the
    // JSON line or the CSV record, whatever the format).
    let scratch = Scratch::new();
    let long = "harbour ".repeat(100);
    scratch.write("docs/long.txt", &long);
    scratch.write("docs/short.txt", "tide quay");
    scratch.write(
        "in.jsonl",
        format!("{{\"id\":\"l\",\"text\":\"{long}\"}}\n{{\"id\":\"s\",\"text\":\"tide\"}}\n"),
    );
    scratch.write("in.csv", format!("id,text\nl,{long}\ns,tide\n"));
    for (input, line) in [
        ("docs", "docs/long.txt: document `docs/long.txt`"),
        ("in.jsonl", "in.jsonl:1:"),
        ("in.csv", "in.csv:2:"),
    ] {
        themata(scratch.root())
            .args([
                "build",
                input,
                "--out",
                "corpus.bin",
                "--max-document-bytes",
                "500",
            ])
            .args(KEEP_ALL)
            .assert()
            .success()
            .stderr(predicate::str::contains(line))
            .stderr(predicate::str::contains(
                "is longer than 500 bytes and is skipped",
            ));
        assert_eq!(corpus_ids(&scratch).len(), 1, "{input}");
    }
    themata(scratch.root())
        .args([
            "build",
            "docs",
            "--out",
            "corpus.bin",
            "--max-document-bytes",
            "0",
        ])
        .assert()
        .code(BAD_INPUT);
}

#[test]
fn bad_input_an_empty_file_is_refused_or_skipped_by_name() {
    // Source: RFC 4180 (a CSV file starts with its header row when it has
    // one) and common practice (nothing to model is an error, exit 2).
    let scratch = Scratch::new();
    scratch.write("empty.jsonl", "");
    scratch.write("empty.csv", "");
    scratch.write("empty.txt", "");
    build(&scratch, "empty.jsonl")
        .code(BAD_INPUT)
        .stderr(predicate::str::contains("no document has any words left (0 read"));
    build(&scratch, "empty.csv")
        .code(BAD_INPUT)
        .stderr(predicate::str::contains(
            "empty.csv: the file is empty, so there is no header row",
        ));
    build(&scratch, "empty.txt")
        .code(BAD_INPUT)
        .stderr(predicate::str::contains(
            "empty.txt: document `empty.txt` is empty",
        ));
}

#[test]
fn bad_input_a_corpus_of_stopwords_only_is_refused() {
    // Source: the built-in English stopword list holds `the`, `and`, `of`
    // (common practice: every English list does).
    let scratch = Scratch::new();
    scratch.write(
        "in.jsonl",
        "{\"id\":\"a\",\"text\":\"the and of\"}\n{\"id\":\"b\",\"text\":\"of the\"}\n",
    );
    build(&scratch, "in.jsonl")
        .code(BAD_INPUT)
        .stderr(predicate::str::contains(
            "document `a` has no tokens after tokenizing",
        ))
        .stderr(predicate::str::contains(
            "no document has any words left (2 read, 0 kept",
        ));
    assert!(!scratch.path("corpus.bin").exists());
}

#[test]
fn bad_input_more_topics_than_tokens_is_refused_before_fitting() {
    // Source: common practice (K topics need at least K tokens to hold one each).
    let scratch = Scratch::new();
    scratch.write(
        "in.jsonl",
        "{\"id\":\"a\",\"text\":\"tide quay harbour\"}\n{\"id\":\"b\",\"text\":\"tide soil seed\"}\n",
    );
    build(&scratch, "in.jsonl").success();
    themata(scratch.root())
        .args(["fit", "corpus.bin", "--topics", "50", "--out", "model"])
        .assert()
        .code(BAD_INPUT)
        .stderr(predicate::str::contains(
            "50 topics is more than the 6 tokens of the corpus",
        ));
    assert!(!scratch.path("model").exists());
}

#[test]
fn bad_input_duplicate_ids_keep_the_first_document() {
    // Source: common practice (ids name documents, so the first one wins
    // and later ones are reported).
    let scratch = Scratch::new();
    scratch.write(
        "in.jsonl",
        "{\"id\":\"a\",\"text\":\"tide quay\"}\n{\"id\":\"a\",\"text\":\"soil seed\"}\n{\"id\":\"b\",\"text\":\"soil\"}\n",
    );
    build(&scratch, "in.jsonl")
        .success()
        .stderr(predicate::str::contains(
            "in.jsonl:2: document id `a` was already used by an earlier document",
        ));
    assert_eq!(corpus_ids(&scratch), ["a", "b"]);
}

#[test]
fn bad_input_unknown_json_fields_are_ignored() {
    // Source: RFC 8259 §4 (an object's members are name/value pairs; a
    // reader may use the ones it knows): fields other than text, id, label
    // and date, of any type, change nothing.
    let scratch = Scratch::new();
    scratch.write(
        "in.jsonl",
        "{\"id\":\"a\",\"text\":\"tide quay\",\"extra\":{\"deep\":[1,2,null]},\"n\":5}\n{\"zzz\":true,\"id\":\"b\",\"text\":\"soil\"}\n",
    );
    build(&scratch, "in.jsonl")
        .success()
        .stderr(predicate::str::contains("skipped").not());
    assert_eq!(corpus_ids(&scratch), ["a", "b"]);
}

#[test]
fn bad_input_ragged_csv_rows_are_skipped_with_their_line() {
    // Source: RFC 4180 §2.4 (each record should contain the same number of
    // fields throughout the file).
    let scratch = Scratch::new();
    scratch.write(
        "in.csv",
        "id,text\na,tide quay\nb,tide,quay,soil\nc\nd,soil seed\n",
    );
    build(&scratch, "in.csv")
        .success()
        .stderr(predicate::str::contains(
            "in.csv:3: record has 4 fields but the header row has 2",
        ))
        .stderr(predicate::str::contains(
            "in.csv:4: record has 1 field but the header row has 2",
        ));
    assert_eq!(corpus_ids(&scratch), ["a", "d"]);
}

#[test]
fn bad_input_a_config_with_wrong_types_names_file_line_and_key() {
    // Source: TOML 1.0 (strings are quoted, integers are not; arrays in brackets).
    let scratch = Scratch::new();
    let cases = [
        (
            "[fit]\ntopics = \"five\"\n",
            "bad.toml:2: fit.topics: invalid type: string \"five\"",
        ),
        ("[input]\npaths = \"in.jsonl\"\n", "bad.toml:2: input.paths"),
        (
            "[fit]\ntopics = 5\niterations = -3\n",
            "bad.toml:3: fit.iterations",
        ),
        (
            "[tokenizer]\nmin_length = 2.5\n",
            "bad.toml:2: tokenizer.min_length",
        ),
        ("[output]\ndir = [1]\n", "bad.toml:2: output.dir"),
    ];
    for (text, expected) in cases {
        scratch.write("bad.toml", text);
        themata(scratch.root())
            .args(["run", "bad.toml"])
            .assert()
            .code(BAD_INPUT)
            .stderr(predicate::str::contains(expected));
    }
}

// A names file that does not parse: tests/suite/nightly.rs,
// `bad_publishing_configs_name_the_line_and_a_broken_names_file_is_survived`.

/// A small model folder `model` fitted in `scratch`.
fn small_model_folder(scratch: &Scratch) {
    scratch.write(
        "in.jsonl",
        "{\"id\":\"a\",\"text\":\"tide quay harbour tide\"}\n{\"id\":\"b\",\"text\":\"soil seed soil harbour\"}\n{\"id\":\"c\",\"text\":\"tide quay soil seed\"}\n",
    );
    build(scratch, "in.jsonl").success();
    themata(scratch.root())
        .args([
            "fit",
            "corpus.bin",
            "--topics",
            "2",
            "--iterations",
            "20",
            "--out",
            "model",
            "-q",
        ])
        .assert()
        .success();
}

#[test]
fn bad_input_a_model_of_a_future_format_version_is_refused() {
    // Source: common practice (a reader refuses a format newer than it
    // knows rather than guess). The version field is bytes 8..12 (see
    // model::format); the checksum covers the payload only.
    let scratch = Scratch::new();
    small_model_folder(&scratch);
    let mut bytes = std::fs::read(scratch.path("model/model.bin")).unwrap();
    bytes[8..12].copy_from_slice(&9u32.to_le_bytes());
    std::fs::write(scratch.path("model/model.bin"), bytes).unwrap();
    themata(scratch.root())
        .args(["show", "model"])
        .assert()
        .code(BAD_INPUT)
        .stderr(predicate::str::contains(
            "model format version 9 is not supported by this build",
        ))
        .stderr(predicate::str::contains("written by a newer themata"));
}

#[test]
fn bad_input_a_model_folder_from_another_program_is_refused() {
    // Source: common practice (magic bytes identify a file's kind).
    let scratch = Scratch::new();
    scratch.write("other/model.bin", "{\"weights\": [0.5, 0.5]}");
    scratch.write("other/summary.json", "{}");
    scratch.write("elsewhere/params.json", "{}");
    themata(scratch.root())
        .args(["show", "other"])
        .assert()
        .code(BAD_INPUT)
        .stderr(predicate::str::contains(
            "other/model.bin: not a themata model file",
        ));
    themata(scratch.root())
        .args(["show", "elsewhere"])
        .assert()
        .code(BAD_INPUT)
        .stderr(predicate::str::contains("elsewhere: no model here"));
    // Nor is its folder replaced by a fit: it is not a themata output folder.
    small_model_folder(&scratch);
    themata(scratch.root())
        .args([
            "fit",
            "corpus.bin",
            "--topics",
            "2",
            "--iterations",
            "5",
            "--out",
            "elsewhere",
            "-q",
        ])
        .assert()
        .code(BAD_INPUT)
        .stderr(predicate::str::contains("is not a themata output folder"));
    assert!(scratch.path("elsewhere/params.json").exists());
}

// ---------------------------------------------------------------------------
// Failing disks. Mounts need root (CI runs as root); without it, or when
// the mount is refused (a container without the capability), a case says
// why on standard error and uses what an ordinary user has.

/// A tmpfs mounted at `path`, unmounted when dropped.
struct Mount {
    path: PathBuf,
}

impl Mount {
    /// Mounts a tmpfs of `size` (e.g. `1m`) at `path`, or says why not.
    fn tmpfs(path: &Path, size: &str) -> Result<Mount, String> {
        let user = Process::new("id")
            .arg("-u")
            .output()
            .map_err(|err| format!("cannot run `id -u`: {err}"))?;
        if String::from_utf8_lossy(&user.stdout).trim() != "0" {
            return Err("not running as root".into());
        }
        std::fs::create_dir_all(path).unwrap();
        let status = Process::new("mount")
            .args(["-t", "tmpfs", "-o", &format!("size={size}"), "tmpfs"])
            .arg(path)
            .stderr(Stdio::null())
            .status()
            .map_err(|err| format!("cannot run mount: {err}"))?;
        if !status.success() {
            return Err(format!("`mount -t tmpfs` was refused ({status})"));
        }
        Ok(Mount {
            path: path.to_path_buf(),
        })
    }

    /// Remounts read-only.
    fn read_only(&self) {
        let status = Process::new("mount")
            .args(["-o", "remount,ro"])
            .arg(&self.path)
            .status()
            .unwrap();
        assert!(status.success(), "remount,ro failed");
    }

    /// Fills the mount: a file grown until the disk refuses more.
    fn fill(&self) {
        let mut filler = std::fs::File::create(self.path.join("filler")).unwrap();
        let block = vec![0u8; 64 * 1024];
        loop {
            match filler.write(&block) {
                Ok(0) => break,
                Ok(_) => {}
                Err(err) => {
                    assert_eq!(err.raw_os_error(), Some(libc_enospc()), "{err}");
                    break;
                }
            }
        }
        // The last partial block may still fit byte by byte.
        while filler.write(&[0u8]).is_ok_and(|written| written == 1) {}
    }
}

impl Drop for Mount {
    fn drop(&mut self) {
        let _ = Process::new("umount").arg("-l").arg(&self.path).status();
    }
}

/// ENOSPC on Linux (asm-generic/errno-base.h).
fn libc_enospc() -> i32 {
    28
}

/// Every file below `folder` with its bytes, sorted by path.
fn snapshot(folder: &Path) -> Vec<(PathBuf, Vec<u8>)> {
    let mut files = Vec::new();
    let mut pending = vec![folder.to_path_buf()];
    while let Some(dir) = pending.pop() {
        for entry in std::fs::read_dir(&dir).unwrap() {
            let path = entry.unwrap().path();
            let meta = std::fs::symlink_metadata(&path).unwrap();
            if meta.is_dir() {
                pending.push(path);
            } else if meta.is_file() {
                files.push((path.clone(), std::fs::read(&path).unwrap()));
            } else {
                files.push((
                    path.clone(),
                    std::fs::read_link(&path)
                        .unwrap()
                        .into_os_string()
                        .into_encoded_bytes(),
                ));
            }
        }
    }
    files.sort();
    files
}

/// A corpus of 60 documents over six words, as JSON Lines.
fn six_word_documents() -> String {
    let words = ["tide", "quay", "harbour", "soil", "seed", "furrow"];
    (0..60)
        .map(|doc| {
            let text: Vec<&str> = (0..12)
                .map(|token| words[(doc * 7 + token * (doc % 5 + 1)) % 6])
                .collect();
            format!("{{\"id\":\"d{doc:02}\",\"text\":\"{}\"}}\n", text.join(" "))
        })
        .collect()
}

#[test]
fn failing_disk_an_output_folder_on_a_read_only_mount_is_exit_3_and_the_old_output_stays() {
    // Source: POSIX (EROFS: "Read-only file system" for any write to a
    // read-only mount); the outputs are written aside and renamed, so a
    // failed write leaves the previous output as it was.
    let scratch = Scratch::new();
    scratch.write("in.jsonl", six_word_documents());
    build(&scratch, "in.jsonl").success();
    let mount = match Mount::tmpfs(&scratch.path("mnt"), "4m") {
        Ok(mount) => Some(mount),
        Err(why) => {
            eprintln!("read-only mount not tried ({why}); a folder without write permission stands in");
            std::fs::create_dir_all(scratch.path("mnt")).unwrap();
            None
        }
    };
    let fit = |seed: &str| {
        themata(scratch.root())
            .args([
                "fit",
                "corpus.bin",
                "--topics",
                "2",
                "--iterations",
                "20",
                "--seed",
                seed,
                "--out",
                "mnt/model",
                "-q",
            ])
            .assert()
    };
    fit("1").success();
    let before = snapshot(&scratch.path("mnt"));
    match &mount {
        Some(mount) => mount.read_only(),
        None => {
            use std::os::unix::fs::PermissionsExt;
            std::fs::set_permissions(scratch.path("mnt"), std::fs::Permissions::from_mode(0o555)).unwrap();
        }
    }
    let expected = if mount.is_some() {
        "Read-only file system"
    } else {
        "Permission denied"
    };
    fit("2").code(SYSTEM).stderr(predicate::str::contains(expected));
    themata(scratch.root())
        .args(["build", "in.jsonl", "--out", "mnt/corpus.bin"])
        .args(KEEP_ALL)
        .assert()
        .code(SYSTEM)
        .stderr(predicate::str::contains(expected));
    assert_eq!(
        snapshot(&scratch.path("mnt")),
        before,
        "the previous output changed"
    );
    if mount.is_none() {
        use std::os::unix::fs::PermissionsExt;
        std::fs::set_permissions(scratch.path("mnt"), std::fs::Permissions::from_mode(0o755)).unwrap();
    }
}

#[test]
fn failing_disk_a_full_disk_fails_build_fit_and_a_published_run_with_exit_3() {
    // Source: POSIX (ENOSPC: "No space left on device"); the outputs are
    // written aside and renamed, so the previous ones stay whole and a run
    // root keeps pointing at its published run.
    let scratch = Scratch::new();
    scratch.write("in.jsonl", six_word_documents());
    let mount = match Mount::tmpfs(&scratch.path("mnt"), "1m") {
        Ok(mount) => mount,
        Err(why) => {
            eprintln!("full-disk case not run ({why}); the full standard output case still runs");
            return;
        }
    };
    scratch.write(
        "nightly.toml",
        "[input]\npaths = [\"in.jsonl\"]\n[vocabulary]\nmin_docs = 1\nmax_doc_share = 1.0\n\
         [fit]\ntopics = 2\niterations = 20\n[publish]\nroot = \"mnt/root\"\n",
    );
    themata(scratch.root())
        .args(["run", "nightly.toml", "-q"])
        .assert()
        .success();
    build(&scratch, "in.jsonl").success();
    themata(scratch.root())
        .args([
            "fit",
            "corpus.bin",
            "--topics",
            "2",
            "--iterations",
            "20",
            "--out",
            "mnt/model",
            "-q",
        ])
        .assert()
        .success();
    mount.fill();
    let before = snapshot(&scratch.path("mnt"));
    let no_space = "No space left on device";
    themata(scratch.root())
        .args(["build", "in.jsonl", "--out", "mnt/corpus.bin"])
        .args(KEEP_ALL)
        .assert()
        .code(SYSTEM)
        .stderr(predicate::str::contains(no_space));
    themata(scratch.root())
        .args([
            "fit",
            "corpus.bin",
            "--topics",
            "2",
            "--iterations",
            "20",
            "--seed",
            "2",
            "--out",
            "mnt/model",
            "-q",
        ])
        .assert()
        .code(SYSTEM)
        .stderr(predicate::str::contains(no_space));
    themata(scratch.root())
        .args([
            "fit",
            "corpus.bin",
            "--topics",
            "2",
            "--iterations",
            "20",
            "--checkpoint-every",
            "1",
            "--out",
            "mnt/other",
            "-q",
        ])
        .assert()
        .code(SYSTEM)
        .stderr(predicate::str::contains(no_space));
    themata(scratch.root())
        .args(["run", "nightly.toml", "-q"])
        .assert()
        .code(SYSTEM)
        .stderr(predicate::str::contains(no_space));
    assert_eq!(
        snapshot(&scratch.path("mnt")),
        before,
        "a failed write changed what was there"
    );
    let current = std::fs::canonicalize(scratch.path("mnt/root/current")).unwrap();
    Model::load(&current.join("model.bin")).unwrap();
    Model::load(&scratch.path("mnt/model/model.bin")).unwrap();
}

#[test]
fn failing_disk_a_failed_checkpoint_write_leaves_the_previous_checkpoint_usable() {
    // Source: common practice for crash safety (write aside, then rename):
    // the checkpoint of an interrupted fit survives a later run whose
    // checkpoint writes fail on a full disk, and a run on a freed disk
    // resumes from it.
    let scratch = Scratch::new();
    let mount = match Mount::tmpfs(&scratch.path("mnt"), "8m") {
        Ok(mount) => mount,
        Err(why) => {
            eprintln!("failed-checkpoint case not run ({why})");
            return;
        }
    };
    let data = synthetic::from_topics(
        synthetic::zipf_topics(10, 400, 0.05, 3),
        &[0.1; 10],
        &vec![200; 300],
        (0..400).map(|word| format!("w{word:03}x")).collect(),
        4,
    );
    themata::model::corpus_file::save_corpus(&data.corpus, &scratch.path("corpus.bin")).unwrap();
    let start = [
        "fit",
        "corpus.bin",
        "--topics",
        "10",
        "--iterations",
        "1000",
        "--checkpoint-every",
        "3",
        "--out",
        "mnt/model",
        "-q",
    ];
    let resume = ["fit", "--resume", "mnt/model", "--checkpoint-every", "3", "-q"];
    let checkpoint = scratch.path("mnt/model.checkpoint");
    // An interrupted fit: killed once its first checkpoint is there.
    let mut child = Process::new(assert_cmd::cargo::cargo_bin("themata"))
        .current_dir(scratch.root())
        .args(start)
        .spawn()
        .unwrap();
    while !checkpoint.exists() && child.try_wait().unwrap().is_none() {
        std::thread::sleep(std::time::Duration::from_millis(1));
    }
    child.kill().unwrap();
    child.wait().unwrap();
    let saved = std::fs::read(&checkpoint).expect("the fit was killed after its first checkpoint");
    let done = Model::decode(saved.clone(), &checkpoint).unwrap().iterations_done;
    assert!(done < 1000, "the fit finished before it was killed");
    mount.fill();
    themata(scratch.root())
        .args(resume)
        .assert()
        .code(SYSTEM)
        .stderr(predicate::str::contains("No space left on device"));
    assert_eq!(
        std::fs::read(&checkpoint).unwrap(),
        saved,
        "the checkpoint changed"
    );
    let names: Vec<String> = std::fs::read_dir(scratch.path("mnt"))
        .unwrap()
        .map(|entry| entry.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    assert!(
        names
            .iter()
            .all(|name| name == "filler" || name == "model.checkpoint"),
        "{names:?}"
    );
    // On a freed disk the fit resumes from the checkpoint and finishes
    // (that a resumed fit ends bit for bit like an uninterrupted one is
    // checked in tests/suite/cli.rs, `killed_run_resumes_to_the_same_bytes`).
    std::fs::remove_file(scratch.path("mnt/filler")).unwrap();
    themata(scratch.root()).args(resume).assert().success();
    let model = Model::load(&scratch.path("mnt/model/model.bin")).unwrap();
    assert_eq!(model.iterations_done, 1000);
    assert!(
        !checkpoint.exists(),
        "the checkpoint is removed once the model is written"
    );
}

#[test]
fn failing_disk_a_full_standard_output_is_exit_3() {
    // Source: Linux /dev/full (every write fails with ENOSPC); unlike a
    // closed pipe, which ends a command quietly, a full output is a failure.
    let scratch = Scratch::new();
    small_model_folder(&scratch);
    let full = std::fs::OpenOptions::new().write(true).open("/dev/full").unwrap();
    let output = Process::new(assert_cmd::cargo::cargo_bin("themata"))
        .current_dir(scratch.root())
        .args(["show", "model"])
        .stdout(full)
        .stderr(Stdio::piped())
        .output()
        .unwrap();
    assert_eq!(
        output.status.code(),
        Some(SYSTEM),
        "{}",
        String::from_utf8_lossy(&output.stderr)
    );
    assert!(String::from_utf8_lossy(&output.stderr).contains("No space left on device"));
}

#[test]
fn an_input_growing_while_read_gives_whole_documents_and_at_most_one_cut_line() {
    // Source: POSIX read(2) (a read at the current end of a file returns 0,
    // end of input, even while another process is still writing). Lines
    // are appended in two writes each while `build` reads: it reads what is
    // there when it reaches the end, so every document it keeps is a whole
    // line, and only the last line it saw can be cut (then refused as bad
    // JSON with its line, not kept half).
    let scratch = Scratch::new();
    let path = scratch.write(
        "grow.jsonl",
        "{\"id\":\"first\",\"text\":\"tide quay harbour\"}\n",
    );
    let mut file = std::fs::OpenOptions::new().append(true).open(&path).unwrap();
    let child = Process::new(assert_cmd::cargo::cargo_bin("themata"))
        .current_dir(scratch.root())
        .args(["build", "grow.jsonl", "--out", "corpus.bin"])
        .args(KEEP_ALL)
        .stdout(Stdio::null())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    for doc in 0..20_000 {
        let line = format!("{{\"id\":\"d{doc}\",\"text\":\"soil seed furrow tide\"}}\n");
        let (head, tail) = line.split_at(line.len() / 2);
        file.write_all(head.as_bytes()).unwrap();
        file.write_all(tail.as_bytes()).unwrap();
    }
    let output = child.wait_with_output().unwrap();
    let stderr = String::from_utf8_lossy(&output.stderr);
    assert_eq!(output.status.code(), Some(0), "{stderr}");
    let skipped: Vec<&str> = stderr.lines().filter(|line| line.contains("skipped:")).collect();
    assert!(skipped.len() <= 1, "{skipped:?}");
    let kept = corpus_ids(&scratch);
    for line in &skipped {
        assert!(line.contains("line is not valid JSON"), "{line}");
        // "themata: skipped: grow.jsonl:LINE: line is not valid JSON: ..."
        let number: usize = line.split(':').nth(3).unwrap().trim().parse().unwrap();
        assert_eq!(
            number,
            kept.len() + 1,
            "only the last line seen can be cut: {line}"
        );
    }
    assert_eq!(kept[0], "first");
    for (index, id) in kept.iter().enumerate().skip(1) {
        assert_eq!(id, &format!("d{}", index - 1));
    }
}

#[test]
fn files_removed_from_a_folder_while_it_is_read_are_reported_not_fatal() {
    // Source: POSIX open(2) (ENOENT for a name removed since the folder was
    // listed). A thread removes files while `build` walks the folder: each
    // file is either read whole or reported as unreadable by name; the
    // command ends normally with what it read.
    let scratch = Scratch::new();
    for doc in 0..3000 {
        scratch.write(&format!("docs/{doc:05}.txt"), "tide quay harbour soil");
    }
    let child = Process::new(assert_cmd::cargo::cargo_bin("themata"))
        .current_dir(scratch.root())
        .args(["build", "docs", "--out", "corpus.bin"])
        .args(KEEP_ALL)
        .stdout(Stdio::null())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    let folder = scratch.path("docs");
    let remover = std::thread::spawn(move || {
        for doc in (1000..3000).rev() {
            let _ = std::fs::remove_file(folder.join(format!("{doc:05}.txt")));
        }
    });
    let output = child.wait_with_output().unwrap();
    remover.join().unwrap();
    let stderr = String::from_utf8_lossy(&output.stderr);
    assert_eq!(output.status.code(), Some(0), "{stderr}");
    let kept = corpus_ids(&scratch);
    assert!(
        kept.len() >= 1000,
        "the files never removed are read: {}",
        kept.len()
    );
    for line in stderr.lines().filter(|line| line.contains("skipped:")) {
        let reported = line.contains("cannot be opened") || line.contains("cannot be read");
        assert!(reported || line.contains("skipped: ... and "), "{line}");
    }
    eprintln!("{} of 3000 files read while 2000 were being removed", kept.len());
}
