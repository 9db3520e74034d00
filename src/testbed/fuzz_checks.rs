//! The checks behind the fuzz targets (`fuzz/`) and their property-test
//! twins (`tests/suite/hardening.rs`): one function per target, taking any
//! bytes. Each feeds the bytes to one reader or decoder of user data and
//! asserts what must hold for every input: no panic, an error that is bad
//! input (exit 2) rather than a system failure, and for what is accepted a
//! result that keeps the reader's promises (documents with text, unique
//! ids, a decoded file that encodes and decodes to the same thing).
//!
//! A failed assertion here is a bug in the code under test, found by the
//! fuzzer or the property test; these functions panic on purpose.

use std::collections::HashSet;
use std::io::Cursor;
use std::path::Path;

use crate::ingest::read::{InputFormat, ReadOptions, read_stream};
use crate::ingest::tokenize::{Tokenizer, TokenizerSettings, known_stemmer_languages};
use crate::model::Model;
use crate::model::corpus_file::{decode_corpus, encode_corpus};
use crate::model::format::{FileKind, HEADER_LEN};
use crate::publish::names::TopicNames;
use crate::settings::RunConfig;

/// JSON Lines read from a stream.
pub fn json_lines(bytes: &[u8]) {
    read_checked(bytes, InputFormat::Jsonl);
}

/// A CSV table read from a stream.
pub fn csv_table(bytes: &[u8]) {
    read_checked(bytes, InputFormat::Csv);
}

/// One text document read from a stream: the reader of every file a
/// folder walk finds.
pub fn text_file(bytes: &[u8]) {
    read_checked(bytes, InputFormat::Text);
}

fn read_checked(bytes: &[u8], format: InputFormat) {
    let options = ReadOptions {
        format,
        ..ReadOptions::default()
    };
    let mut diagnostics = Vec::new();
    let mut warnings = Vec::new();
    let mut ids = HashSet::new();
    let mut emitted = 0usize;
    let result = read_stream(
        Box::new(Cursor::new(bytes.to_vec())),
        &options,
        &mut diagnostics,
        &mut warnings,
        &mut |document| {
            assert!(
                !document.text.trim().is_empty(),
                "a document without text was handed over"
            );
            assert!(
                ids.insert(document.id.clone()),
                "id `{}` handed over twice",
                document.id
            );
            emitted += 1;
        },
    );
    match result {
        Ok(counts) => {
            assert_eq!(counts.documents_emitted, emitted);
            assert!(counts.records_seen >= emitted);
        }
        Err(error) => assert!(!error.to_string().is_empty()),
    }
    for diagnostic in &diagnostics {
        assert!(!diagnostic.to_string().is_empty());
    }
}

/// The tokenizer: the first byte picks the settings, the rest is the text
/// (invalid UTF-8 replaced, as a reader would refuse it).
pub fn tokenizer(bytes: &[u8]) {
    let Some((&flags, rest)) = bytes.split_first() else {
        return;
    };
    let text = String::from_utf8_lossy(rest);
    let languages = known_stemmer_languages();
    let stemmer = match (flags >> 4) as usize {
        0..8 => None,
        pick => languages.get(pick % languages.len().max(1)).copied(),
    };
    let min_length = 1 + (flags & 0b11) as usize;
    let settings = TokenizerSettings::default()
        .with_lowercase(flags & 0b100 != 0)
        .with_drop_numbers(flags & 0b1000 != 0)
        .with_length_bounds(min_length, min_length + 8)
        .with_stemmer(stemmer);
    let Ok(tokenizer) = Tokenizer::new(&settings) else {
        panic!("settings built from known parts were refused");
    };
    let tokens = tokenizer.tokenize(&text);
    let mut with_surface = Vec::new();
    tokenizer.for_each_token_with_surface(&text, &mut |token, surface| {
        let length = surface.chars().count();
        assert!(
            (settings.min_length..=settings.max_length).contains(&length),
            "surface `{surface}` of {length} chars is outside the length bounds"
        );
        with_surface.push(token.to_string());
    });
    assert_eq!(tokens, with_surface, "the two token walks disagree");
    for token in &tokens {
        assert!(!token.is_empty(), "an empty token was kept");
    }
}

/// The name every decoded image is given in errors.
const FUZZ_PATH: &str = "fuzz-input";

/// A framed file image from fuzz bytes. A first byte with its top bit set
/// means the rest is a whole file as is (header included); otherwise its low
/// bits pick a readable version and a valid header (magic, version, length,
/// CRC) is built around the rest, so the payload decoder and the checks
/// behind it are reached.
pub fn frame(kind: FileKind, bytes: &[u8]) -> Vec<u8> {
    let Some((&selector, rest)) = bytes.split_first() else {
        return Vec::new();
    };
    if selector & 0x80 != 0 {
        return rest.to_vec();
    }
    let versions = kind.current_version() - kind.oldest_version() + 1;
    let version = kind.oldest_version() + u32::from(selector) % versions;
    let mut image = Vec::with_capacity(HEADER_LEN + rest.len());
    image.extend_from_slice(kind.magic());
    image.extend_from_slice(&version.to_le_bytes());
    image.extend_from_slice(&(rest.len() as u64).to_le_bytes());
    image.extend_from_slice(&crc32fast::hash(rest).to_le_bytes());
    image.extend_from_slice(rest);
    image
}

/// The fuzz bytes that frame to `image` with a valid header of version
/// `version` (the inverse of [`frame`] for seeds).
pub fn unframe(kind: FileKind, image: &[u8]) -> Option<Vec<u8>> {
    let version = u32::from_le_bytes(image.get(8..12)?.try_into().ok()?);
    let selector = u8::try_from(version.checked_sub(kind.oldest_version())?).ok()?;
    let mut bytes = vec![selector];
    bytes.extend_from_slice(image.get(HEADER_LEN..)?);
    Some(bytes)
}

/// The corpus loader: a corpus it accepts writes out and reads back equal.
pub fn corpus_file(bytes: &[u8]) {
    let path = Path::new(FUZZ_PATH);
    match decode_corpus(frame(FileKind::Corpus, bytes), path) {
        Ok(corpus) => {
            let image = match encode_corpus(&corpus, path) {
                Ok(image) => image,
                Err(error) => panic!("an accepted corpus does not encode: {error}"),
            };
            match decode_corpus(image, path) {
                Ok(again) => assert_eq!(again, corpus, "the corpus changed on a round trip"),
                Err(error) => panic!("an accepted corpus, written again, is refused: {error}"),
            }
        }
        Err(error) => assert!(error.is_bad_input(), "not reported as bad input: {error}"),
    }
}

/// The model loader: a model it accepts writes out to an image that reads
/// back and writes out to the same bytes.
pub fn model_file(bytes: &[u8]) {
    let path = Path::new(FUZZ_PATH);
    match Model::decode(frame(FileKind::Model, bytes), path) {
        Ok(model) => {
            let image = match model.encode(path) {
                Ok(image) => image,
                Err(error) => panic!("an accepted model does not encode: {error}"),
            };
            match Model::decode(image.clone(), path) {
                Ok(again) => match again.encode(path) {
                    Ok(second) => assert!(second == image, "the model changed on a round trip"),
                    Err(error) => panic!("a model read back does not encode: {error}"),
                },
                Err(error) => panic!("an accepted model, written again, is refused: {error}"),
            }
        }
        Err(error) => assert!(error.is_bad_input(), "not reported as bad input: {error}"),
    }
}

/// The config file parser (text as TOML; invalid UTF-8 replaced, as the
/// loader refuses it before parsing).
pub fn run_config(bytes: &[u8]) {
    let text = String::from_utf8_lossy(bytes);
    if let Err(error) = RunConfig::parse(&text, Path::new("fuzz/config.toml")) {
        assert!(!error.to_string().is_empty());
    }
}

/// The topic names file.
pub fn names_file(bytes: &[u8]) {
    let text = String::from_utf8_lossy(bytes);
    match TopicNames::parse(&text, Path::new("fuzz/names.toml")) {
        Ok(names) => assert!(names.len() <= text.len()),
        Err(error) => assert!(!error.to_string().is_empty()),
    }
}
