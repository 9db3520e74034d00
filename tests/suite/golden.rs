//! The demo's outputs, byte for byte: every file `themata run
//! configs/demo.toml` writes, and what it prints, against the sizes and
//! CRC-32s recorded in `tests/golden/demo.txt`. A change that alters any
//! output fails here; when the change is meant, refresh the record with
//! `THEMATA_BLESS=1 cargo test --release --test suite golden` and say why in
//! the commit.

use std::path::Path;

use crate::util::{Scratch, themata};

/// summary.json fields that depend on the machine or the moment, not on the
/// inputs and the seed.
const VARYING_SUMMARY_FIELDS: [&str; 4] = [
    "sampling_seconds",
    "tokens_per_second",
    "peak_rss_bytes",
    "threads",
];

fn record_line(name: &str, bytes: &[u8]) -> String {
    format!("{name}\t{}\t{:08x}\n", bytes.len(), crc32fast::hash(bytes))
}

#[test]
fn the_demo_writes_the_same_bytes_as_recorded() {
    // Source: the recorded outputs of this project's demo (an invented
    // corpus), refreshed only on purpose; the check is that nothing else
    // changes them.
    let scratch = Scratch::new();
    let repo = Path::new(env!("CARGO_MANIFEST_DIR"));
    let out = scratch.path("demo");
    let run = themata(repo)
        .args(["run", "configs/demo.toml", "--quiet", "--out"])
        .arg(&out)
        .output()
        .unwrap();
    assert!(run.status.success(), "{}", String::from_utf8_lossy(&run.stderr));
    let mut record = record_line("stdout", &run.stdout);
    let mut names: Vec<String> = std::fs::read_dir(&out)
        .unwrap()
        .map(|entry| entry.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    names.sort();
    for name in names {
        let bytes = std::fs::read(out.join(&name)).unwrap();
        if name == "summary.json" {
            let mut summary: serde_json::Value = serde_json::from_slice(&bytes).unwrap();
            let object = summary.as_object_mut().unwrap();
            for field in VARYING_SUMMARY_FIELDS {
                assert!(object.remove(field).is_some(), "summary.json has no `{field}`");
            }
            record.push_str(&record_line(
                "summary.json (fixed fields)",
                &serde_json::to_vec(&summary).unwrap(),
            ));
        } else {
            record.push_str(&record_line(&name, &bytes));
        }
    }
    // Source: issue 11, "Done when" — the demo's document shares, as TSV,
    // take less room than the demo's input.
    let input = std::fs::metadata(repo.join("corpora-demo/bulletin.jsonl"))
        .unwrap()
        .len();
    for name in ["documents.tsv", "documents-wide.tsv"] {
        let shares = std::fs::metadata(out.join(name)).unwrap().len();
        assert!(shares < input, "{name} has {shares} bytes, the input {input}");
    }
    let path = repo.join("tests/golden/demo.txt");
    if std::env::var_os("THEMATA_BLESS").is_some() {
        std::fs::create_dir_all(path.parent().unwrap()).unwrap();
        std::fs::write(&path, &record).unwrap();
    }
    let expected = std::fs::read_to_string(&path).unwrap_or_default();
    assert_eq!(
        record, expected,
        "the demo's outputs changed (name, bytes, CRC-32 above); if that is meant, run THEMATA_BLESS=1 cargo test --release --test suite golden"
    );
}
