//! Stopword lists: resolving specs (`none`, a language name or ISO code,
//! or a file with one word per line) into one sorted, normalised word list,
//! and reading stopword files.

use std::path::Path;

use super::english::ENGLISH_STOPWORDS;
use super::languages::{self, STOPWORD_LANGUAGES, StopwordOrigin};
use super::{TokenizeError, normalize_word};

/// The stopword spec meaning "no stopword list at all".
const NO_STOPWORDS_SPEC: &str = "none";

/// A few stopword language names and codes for error text, with a count of the rest.
pub(super) fn stopword_language_examples() -> String {
    const SHOWN: [&str; 8] = [
        "english",
        "french",
        "german",
        "spanish",
        "italian",
        "portuguese",
        "dutch",
        "russian",
    ];
    let shown: Vec<String> = SHOWN
        .iter()
        .filter_map(|name| languages::find_stopword_language(name))
        .map(|language| format!("{} ({})", language.name, language.code))
        .collect();
    let rest = STOPWORD_LANGUAGES.len().saturating_sub(shown.len());
    format!("{} and {rest} more", shown.join(", "))
}

/// Names of the languages usable as stopword specs (each also by its ISO
/// 639-1 code), sorted; for help text.
pub fn known_languages() -> Vec<&'static str> {
    STOPWORD_LANGUAGES.iter().map(|language| language.name).collect()
}

/// Normalises (NFKC, apostrophes, lowercase) and sorts words, dropping empty
/// ones and duplicates.
pub(super) fn normalized_sorted_words<'a>(words: impl IntoIterator<Item = &'a str>) -> Vec<String> {
    let mut normalized: Vec<String> = words
        .into_iter()
        .map(|word| normalize_word(word, true))
        .filter(|word| !word.is_empty())
        .collect();
    normalized.sort_unstable();
    normalized.dedup();
    normalized
}

/// Whether a stopword spec names a file rather than a language: it
/// contains a path separator or a `.`, or a file of that name exists.
/// `none` is never a path. Surrounding whitespace is ignored.
pub fn looks_like_path(spec: &str) -> bool {
    let spec = spec.trim();
    if spec.is_empty() || spec.eq_ignore_ascii_case(NO_STOPWORDS_SPEC) {
        return false;
    }
    spec.contains(['/', '\\', '.']) || spec.contains(std::path::MAIN_SEPARATOR) || Path::new(spec).is_file()
}

/// Reads a stopword file: one word per line, `#` starts a comment, blank
/// lines are ignored (several words on one line are each taken).
fn read_stopword_file(path: &Path) -> Result<Vec<String>, TokenizeError> {
    let bytes = std::fs::read(path).map_err(|io_error| TokenizeError::StopwordFileUnreadable {
        path: path.to_path_buf(),
        io_error,
    })?;
    let mut words = Vec::new();
    for (index, raw_line) in bytes.split(|byte| *byte == b'\n').enumerate() {
        let line = std::str::from_utf8(raw_line).map_err(|_| TokenizeError::StopwordFileNotUtf8 {
            path: path.to_path_buf(),
            line: index + 1,
        })?;
        let line = if index == 0 {
            line.strip_prefix('\u{FEFF}').unwrap_or(line)
        } else {
            line
        };
        let content = line.split('#').next().unwrap_or_default();
        words.extend(content.split_whitespace().map(str::to_string));
    }
    Ok(words)
}

/// Resolves stopword specs ("none", a language name or code, or a file path)
/// into (sorted word list, source descriptions).
///
/// * `none` (any case) means no list and must stand alone.
/// * A language by name or ISO 639-1 code, any case (see [`known_languages`]):
///   `english`/`en` is this project's own list ([`ENGLISH_STOPWORDS`]), the
///   others come from the `stop-words` crate. Described by its name.
/// * A path (contains `/`, `\` or `.`, or is an existing file): a UTF-8 file
///   with one word per line, `#` comments, blank lines ignored. Described as
///   `file:PATH`.
///
/// Words are NFKC-normalised, apostrophes mapped to `'`, lowercased, sorted
/// and deduplicated. No specs give an empty list and no sources.
pub fn resolve_stopwords(specs: &[String]) -> Result<(Vec<String>, Vec<String>), TokenizeError> {
    let trimmed: Vec<&str> = specs.iter().map(|spec| spec.trim()).collect();
    if trimmed.iter().any(|spec| spec.is_empty()) {
        return Err(TokenizeError::EmptyStopwordSpec);
    }
    let is_none = |spec: &&str| spec.eq_ignore_ascii_case(NO_STOPWORDS_SPEC);
    if trimmed.iter().any(is_none) {
        let others: Vec<&str> = trimmed.iter().copied().filter(|spec| !is_none(spec)).collect();
        if !others.is_empty() {
            return Err(TokenizeError::NoneCombinedWithOtherStopwords {
                others: others.join(", "),
            });
        }
        return Ok((Vec::new(), vec![NO_STOPWORDS_SPEC.to_string()]));
    }

    let mut raw_words: Vec<String> = Vec::new();
    let mut sources: Vec<String> = Vec::new();
    for spec in trimmed {
        let (source, words): (String, Vec<String>) = if looks_like_path(spec) {
            (format!("file:{spec}"), read_stopword_file(Path::new(spec))?)
        } else {
            let language = languages::find_stopword_language(spec)
                .ok_or_else(|| TokenizeError::UnknownLanguage(spec.to_string()))?;
            let words = match language.origin {
                StopwordOrigin::BuiltInEnglish => ENGLISH_STOPWORDS,
                StopwordOrigin::StopWordsCrate(code) => stop_words::lookup(code)
                    .ok_or_else(|| TokenizeError::UnknownLanguage(spec.to_string()))?,
            };
            (
                language.name.to_string(),
                words.iter().map(|word| word.to_string()).collect(),
            )
        };
        if !sources.contains(&source) {
            sources.push(source);
            raw_words.extend(words);
        }
    }
    let words = normalized_sorted_words(raw_words.iter().map(String::as_str));
    Ok((words, sources))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::ingest::tokenize::{TokenizerSettings, known_stemmer_languages};
    use std::io::Write;

    fn specs(list: &[&str]) -> Vec<String> {
        list.iter().map(|spec| spec.to_string()).collect()
    }

    fn stopword_file(contents: &[u8]) -> tempfile::NamedTempFile {
        let mut file = tempfile::Builder::new()
            .suffix(".txt")
            .tempfile()
            .expect("temporary file");
        file.write_all(contents).expect("write temporary file");
        file
    }

    #[test]
    fn english_spec_and_code_give_the_builtin_list() {
        // Source: ISO 639-1 (en = English).
        let by_name = resolve_stopwords(&specs(&["english"])).expect("english resolves");
        let by_code = resolve_stopwords(&specs(&["EN"])).expect("en resolves");
        assert_eq!(by_name, by_code);
        assert_eq!(by_name.0, TokenizerSettings::default().stopwords);
        assert_eq!(by_name.1, ["english"]);
    }

    #[test]
    fn several_languages_merge_sorted_and_deduplicated() {
        // Source: stopwords-iso German and Spanish lists in the stop-words crate.
        let (words, sources) =
            resolve_stopwords(&specs(&["german", "es", "spanish"])).expect("languages resolve");
        assert_eq!(sources, ["german", "spanish"]);
        assert!(words.windows(2).all(|pair| pair[0] < pair[1]));
        for word in ["und", "pero"] {
            assert!(words.iter().any(|w| w == word), "missing {word}");
        }
    }

    #[test]
    fn path_specs_are_told_apart_from_language_specs() {
        // Source: common practice (file paths carry a separator or an
        // extension; language names and ISO 639-1 codes carry neither).
        assert!(looks_like_path("lists/extra.txt"));
        assert!(looks_like_path("extra.txt"));
        assert!(looks_like_path("C:\\lists\\extra"));
        assert!(!looks_like_path("french"));
        assert!(!looks_like_path("de"));
        assert!(!looks_like_path("none"));
        let file = stopword_file(b"word\n");
        assert!(looks_like_path(&file.path().to_string_lossy()));
    }

    #[test]
    fn none_with_other_specs_is_an_error() {
        // Source: common practice ("no list" and "a list" contradict each other).
        let error = resolve_stopwords(&specs(&["none", "english"])).expect_err("must fail");
        assert!(matches!(
            error,
            TokenizeError::NoneCombinedWithOtherStopwords { .. }
        ));
        assert!(error.to_string().contains("english"), "{error}");
    }

    #[test]
    fn unknown_language_error_lists_languages_and_mentions_files() {
        // Source: common practice (an error says what would have been accepted).
        let error = resolve_stopwords(&specs(&["klingonese"])).expect_err("must fail");
        assert!(matches!(&error, TokenizeError::UnknownLanguage(name) if name == "klingonese"));
        let message = error.to_string();
        for part in ["klingonese", "english", "french", "file"] {
            assert!(message.contains(part), "{message}");
        }
    }

    #[test]
    fn missing_stopword_file_error_names_the_path() {
        // Source: common practice (I/O errors name the file and the OS reason).
        let path = "/nonexistent-themata-dir/stopwords.txt";
        let error = resolve_stopwords(&specs(&[path])).expect_err("must fail");
        assert!(matches!(error, TokenizeError::StopwordFileUnreadable { .. }));
        let message = error.to_string();
        assert!(message.contains(path), "{message}");
        assert!(message.contains("No such file"), "{message}");
    }

    #[test]
    fn stopword_file_with_invalid_utf8_names_path_and_line() {
        // Source: RFC 3629 (0xFF never appears in UTF-8).
        let file = stopword_file(b"good\nfine\nbad\xFFword\n");
        let path = file.path().to_string_lossy().into_owned();
        let error = resolve_stopwords(std::slice::from_ref(&path)).expect_err("must fail");
        assert!(
            matches!(error, TokenizeError::StopwordFileNotUtf8 { line: 3, .. }),
            "{error:?}"
        );
        let message = error.to_string();
        assert!(message.contains(&path) && message.contains("line 3"), "{message}");
    }

    #[test]
    fn empty_spec_is_an_error() {
        // Source: common practice (a blank value is a mistake, not a language).
        let error = resolve_stopwords(&specs(&["  "])).expect_err("must fail");
        assert!(matches!(error, TokenizeError::EmptyStopwordSpec));
    }

    #[test]
    fn known_language_lists_cover_english_french_and_stemmers() {
        // Source: ISO 639-1 language names; rust-stemmers Algorithm enum.
        let languages = known_languages();
        assert!(languages.contains(&"english") && languages.contains(&"french"));
        assert!(languages.len() > 50, "{}", languages.len());
        let stemmers = known_stemmer_languages();
        assert!(stemmers.contains(&"english") && stemmers.contains(&"russian"));
        assert_eq!(stemmers.len(), 18);
    }
}
