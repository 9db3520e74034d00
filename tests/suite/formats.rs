//! Corpus and model files: round trips, and damaged files refused cleanly.

use themata::fitting::fit::{FitSettings, PriorSpec, fit};
use themata::model::Model;
use themata::model::corpus_file::{load_corpus, save_corpus};
use themata::testbed::synthetic;

use crate::util::Scratch;

fn small_model() -> Model {
    let data = synthetic::two_topics(1);
    let settings = FitSettings {
        burn_in: 2,
        alpha: PriorSpec::List(vec![0.2, 0.4]),
        samples: 2,
        lag: 3,
        trace_every: 5,
        ..FitSettings::fixed(2, 10, 0.1, 0.1, 3)
    };
    fit(data.corpus, &settings, &mut |_| {}).unwrap().0
}

#[test]
fn corpus_round_trip() {
    let scratch = Scratch::new();
    let corpus = synthetic::bars(20, 10, 1.0, 1).corpus;
    let path = scratch.path("c.bin");
    save_corpus(&corpus, &path).unwrap();
    let back = load_corpus(&path).unwrap();
    assert_eq!(back, corpus);
    assert_eq!(
        back.vocabulary.id("px00"),
        Some(corpus.vocabulary.id("px00").unwrap())
    );
}

#[test]
fn model_round_trip_keeps_everything() {
    let scratch = Scratch::new();
    let model = small_model();
    let path = scratch.path("m.bin");
    model.save(&path).unwrap();
    let back = Model::load(&path).unwrap();
    assert_eq!(back.state, model.state);
    assert_eq!(back.priors, model.priors);
    assert_eq!(back.trace, model.trace);
    assert_eq!(back.rng, model.rng);
    assert_eq!(back.samples, model.samples);
    assert_eq!(back.samples.len(), 2);
    assert_eq!(back.encode(&path).unwrap(), model.encode(&path).unwrap());
}

#[test]
fn damaged_model_files_are_refused_not_panicked_on() {
    // Source: common practice — CRC-32 detects every single-bit error; the
    // header is checked before decoding.
    let scratch = Scratch::new();
    let model = small_model();
    let path = scratch.path("m.bin");
    let bytes = model.encode(&path).unwrap();
    for index in (0..bytes.len()).step_by(7) {
        let mut damaged = bytes.clone();
        damaged[index] ^= 0x01;
        std::fs::write(&path, &damaged).unwrap();
        let err = Model::load(&path)
            .err()
            .unwrap_or_else(|| panic!("flip at {index} accepted"));
        assert!(err.to_string().contains("m.bin"), "{err}");
    }
    for cut in [0, 5, 23, 24, bytes.len() / 2, bytes.len() - 1] {
        std::fs::write(&path, &bytes[..cut]).unwrap();
        assert!(Model::load(&path).is_err(), "cut at {cut} accepted");
    }
    let corpus_path = scratch.path("c.bin");
    save_corpus(&model.corpus, &corpus_path).unwrap();
    let err = Model::load(&corpus_path).err().unwrap();
    assert!(err.to_string().contains("not a themata model file"), "{err}");
}

#[test]
fn version_one_model_files_still_load() {
    // Source: tests/fixtures/model-v1.bin, written by themata 0.1.0 (commit
    // 1bf2409, the last version-1 writer) with `fit -k 2 --iterations 30
    // --burn-in 10 --samples 2 --lag 5 --trace-every 5 --seed 5` on the
    // corpus built from tests/fixtures/model-v1-source.jsonl; the weights
    // below are what `show --format tsv` printed then.
    let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/model-v1.bin");
    let model = Model::load(&path).unwrap();
    assert_eq!(model.n_topics(), 2);
    assert_eq!(model.corpus.n_tokens(), 28);
    assert_eq!(model.iterations_done, 30);
    assert_eq!(model.samples.len(), 2);
    // An old model continues with the sampler that wrote it.
    assert_eq!(
        model.schedule.sampler,
        themata::fitting::schedule::SamplerKind::Reference
    );
    let teapot = model.corpus.vocabulary.id("teapot").unwrap() as usize;
    let pedal = model.corpus.vocabulary.id("pedal").unwrap() as usize;
    assert!((model.topic_word_row(0)[teapot] - 0.3289401139173447).abs() < 1e-12);
    assert!((model.topic_word_row(1)[pedal] - 0.2863164281761433).abs() < 1e-12);
    // Saved again, it is written in the current version and loads back the same.
    let scratch = Scratch::new();
    let again = scratch.path("m.bin");
    model.save(&again).unwrap();
    let back = Model::load(&again).unwrap();
    assert_eq!(back.state, model.state);
    assert_eq!(back.samples, model.samples);
}

#[test]
fn version_two_model_files_load_and_continue() {
    // Source: tests/fixtures/model-v2.bin, written by this version (commit
    // after 08c186a) with `fit -k 2 --iterations 30 --burn-in 10 --samples 2
    // --lag 5 --trace-every 5 --seed 5 --sampler metropolis --shards 2` on
    // the corpus built from tests/fixtures/model-v1-source.jsonl (`build
    // --stopwords none --min-docs 1 --max-doc-share 1`); the weights below
    // are what `show --format tsv` printed then.
    let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/model-v2.bin");
    let model = Model::load(&path).unwrap();
    assert_eq!(
        model.schedule.sampler,
        themata::fitting::schedule::SamplerKind::Metropolis
    );
    assert_eq!(model.schedule.shards, 2);
    assert_eq!(model.iterations_done, 30);
    let kettle = model.corpus.vocabulary.id("kettle").unwrap() as usize;
    let pedal = model.corpus.vocabulary.id("pedal").unwrap() as usize;
    assert!((model.topic_word_row(0)[kettle] - 0.3092668241280714).abs() < 1e-12);
    assert!((model.topic_word_row(1)[pedal] - 0.2687931634173267).abs() < 1e-12);
    // Continuing it runs the stored sampler, the same way every time.
    let continued = || {
        let mut model = Model::load(&path).unwrap();
        themata::fitting::fit::extend(&mut model, 8).unwrap();
        themata::fitting::fit::run_to_target(&mut model, &mut |_| {}, &mut |_| {
            std::ops::ControlFlow::Continue(())
        })
        .unwrap();
        model.encode(&path).unwrap()
    };
    assert_eq!(continued(), continued());
}

#[test]
fn version_three_model_files_load_and_write_back_the_same_bytes() {
    // Source: tests/fixtures/model-v3.bin, written by the version that
    // introduced format 3 (after commit af4c1b2) with `fit -k 2 --iterations
    // 30 --burn-in 10 --samples 2 --lag 5 --trace-every 5 --seed 5 --sampler
    // metropolis --shards 2` on tests/fixtures/corpus-v2.bin; the weights
    // below are what `show --format tsv` printed then.
    let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/model-v3.bin");
    let model = Model::load(&path).unwrap();
    assert_eq!(model.topic_ids, vec![0, 1]);
    assert_eq!(model.schedule.shards, 2);
    let bicycle = model.corpus.vocabulary.id("bicycle").unwrap() as usize;
    let kettle = model.corpus.vocabulary.id("kettle").unwrap() as usize;
    assert!((model.topic_word_row(0)[bicycle] - 0.2800371506548105).abs() < 1e-12);
    assert!((model.topic_word_row(1)[kettle] - 0.34024763729490226).abs() < 1e-12);
    // Written again, it gives the fixture's bytes exactly: the file's own
    // shapes (src/model/file.rs) still write format 3 as it was written then.
    assert_eq!(model.encode(&path).unwrap(), std::fs::read(&path).unwrap());
}

#[test]
fn corpus_files_of_both_versions_load_the_same_corpus() {
    // Source: tests/fixtures/corpus-v1.bin was written by themata before
    // format 2 (commit e8f4842) and corpus-v2.bin by the version that
    // introduced it, both with `build tests/fixtures/model-v1-source.jsonl
    // --stopwords none --min-docs 1 --max-doc-share 1`; format 1 has no
    // dates and no surface forms, and the input has neither, so both read
    // to the same corpus.
    let fixtures = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures");
    let old = load_corpus(&fixtures.join("corpus-v1.bin")).unwrap();
    let new = load_corpus(&fixtures.join("corpus-v2.bin")).unwrap();
    assert_eq!(old, new);
    assert_eq!(new.n_tokens(), 28);
    assert_eq!(new.documents[0].id, "a");
    // Written again, the format-2 file gives its bytes exactly.
    let scratch = Scratch::new();
    let again = scratch.path("c.bin");
    save_corpus(&new, &again).unwrap();
    assert_eq!(
        std::fs::read(&again).unwrap(),
        std::fs::read(fixtures.join("corpus-v2.bin")).unwrap()
    );
}
