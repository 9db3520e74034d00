//! Cutting text into tokens by a chain of small filters. This module owns the
//! tokenizer settings stored in corpus and model files, the text
//! normalisation (NFKC, then typographic apostrophes to ASCII `'`), Unicode
//! word segmentation (UAX #29), the filter chain (lowercase, drop numbers,
//! length bounds, stopwords, stemming) and the resolution of stopword specs
//! (`none`, a language name or code, or a file) into a word list.

#![cfg_attr(
    not(test),
    deny(
        clippy::unwrap_used,
        clippy::expect_used,
        clippy::indexing_slicing,
        clippy::panic
    )
)]

mod english;
mod filters;
mod languages;
mod stopwords;

use std::borrow::Cow;
use std::path::PathBuf;

use serde::{Deserialize, Serialize};
use unicode_normalization::{IsNormalized, UnicodeNormalization, is_nfkc_quick};
use unicode_segmentation::UnicodeSegmentation;

pub use english::ENGLISH_STOPWORDS;
pub use filters::{
    DropNonAlphabeticFilter, FilterChain, FilterChainBuilder, LengthFilter, LowercaseFilter, StemFilter,
    StopwordFilter, TokenFilter,
};

use languages::STEMMER_LANGUAGES;
pub use stopwords::{known_languages, looks_like_path, resolve_stopwords};
use stopwords::{normalized_sorted_words, stopword_language_examples};

/// Apostrophe look-alikes mapped to ASCII `'` before segmentation:
/// U+2019 RIGHT SINGLE QUOTATION MARK and U+02BC MODIFIER LETTER APOSTROPHE.
const TYPOGRAPHIC_APOSTROPHES: [char; 2] = ['\u{2019}', '\u{02BC}'];

/// The stopword list used when none is named.
pub const DEFAULT_STOPWORDS: &str = "english";
/// Shortest token kept by default, in characters.
pub const DEFAULT_MIN_LENGTH: usize = 3;
/// Longest token kept by default, in characters.
pub const DEFAULT_MAX_LENGTH: usize = 40;

/// Everything that decides how text becomes tokens; stored in corpus and model files.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct TokenizerSettings {
    /// Lowercase every token (full Unicode lowercasing).
    pub lowercase: bool,
    /// Drop tokens with no alphabetic character (numbers such as `2024`, `3.14`).
    pub drop_numbers: bool,
    /// Shortest kept token, in chars (Unicode scalar values); at least 1.
    pub min_length: usize,
    /// Longest kept token, in chars; at least `min_length`.
    pub max_length: usize,
    /// Words removed after lowercasing, number dropping and length bounds, before stemming.
    pub stopwords: Vec<String>,
    /// Where `stopwords` came from, e.g. `"english"`, `"french"`, `"file:PATH"`, `"none"`.
    pub stopword_sources: Vec<String>,
    /// Snowball stemmer language (e.g. `"english"`), or `None` for no stemming.
    pub stemmer: Option<String>,
}

impl Default for TokenizerSettings {
    /// Lowercase, drop numbers, 3 to 40 chars, the built-in English
    /// stopwords, no stemming.
    fn default() -> TokenizerSettings {
        TokenizerSettings {
            lowercase: true,
            drop_numbers: true,
            min_length: DEFAULT_MIN_LENGTH,
            max_length: DEFAULT_MAX_LENGTH,
            stopwords: normalized_sorted_words(ENGLISH_STOPWORDS.iter().copied()),
            stopword_sources: vec![DEFAULT_STOPWORDS.to_string()],
            stemmer: None,
        }
    }
}

impl TokenizerSettings {
    /// Sets whether tokens are lowercased.
    pub fn with_lowercase(mut self, lowercase: bool) -> TokenizerSettings {
        self.lowercase = lowercase;
        self
    }

    /// Sets whether tokens without any alphabetic character are dropped.
    pub fn with_drop_numbers(mut self, drop_numbers: bool) -> TokenizerSettings {
        self.drop_numbers = drop_numbers;
        self
    }

    /// Sets the kept token lengths, in chars (checked by [`Tokenizer::new`]).
    pub fn with_length_bounds(mut self, min_length: usize, max_length: usize) -> TokenizerSettings {
        self.min_length = min_length;
        self.max_length = max_length;
        self
    }

    /// Replaces the stopword list and its source descriptions as given.
    pub fn with_stopwords(mut self, stopwords: Vec<String>, sources: Vec<String>) -> TokenizerSettings {
        self.stopwords = stopwords;
        self.stopword_sources = sources;
        self
    }

    /// Replaces the stopword list by the one [`resolve_stopwords`] builds from `specs`.
    pub fn with_stopword_specs(self, specs: &[String]) -> Result<TokenizerSettings, TokenizeError> {
        let (words, sources) = resolve_stopwords(specs)?;
        Ok(self.with_stopwords(words, sources))
    }

    /// Sets the Snowball stemmer language, or `None` for no stemming.
    pub fn with_stemmer(mut self, language: Option<&str>) -> TokenizerSettings {
        self.stemmer = language.map(str::to_string);
        self
    }
}

/// Problems building a tokenizer or resolving its stopwords.
#[derive(Debug, thiserror::Error)]
pub enum TokenizeError {
    /// A stopword spec that is neither `none`, a known language, nor a file path.
    #[error(
        "unknown stopword language `{0}`: known languages include {examples}; \
         `none` (no stopwords) or a path to a UTF-8 file with one word per line is also accepted",
        examples = stopword_language_examples()
    )]
    UnknownLanguage(String),

    /// An empty (or all-blank) stopword spec.
    #[error("empty stopword spec: give a language such as `english`, `none`, or a file path")]
    EmptyStopwordSpec,

    /// `none` given together with other stopword specs.
    #[error(
        "stopword spec `none` cannot be combined with other specs ({others}): \
         give `none` alone, or drop it to use the other lists"
    )]
    NoneCombinedWithOtherStopwords {
        /// The other specs, comma-separated.
        others: String,
    },

    /// A stopword file that cannot be read.
    #[error("cannot read stopword file {}: {io_error}; check the path and its permissions", path.display())]
    StopwordFileUnreadable {
        /// The file as given.
        path: PathBuf,
        /// What the operating system said.
        io_error: std::io::Error,
    },

    /// A stopword file with a line that is not valid UTF-8.
    #[error("stopword file {} is not valid UTF-8 at line {line}; save it as UTF-8", path.display())]
    StopwordFileNotUtf8 {
        /// The file as given.
        path: PathBuf,
        /// 1-based line number of the first bad line.
        line: usize,
    },

    /// A stemmer language that `rust-stemmers` does not offer.
    #[error("unknown stemmer language `{0}`: known stemmers are {known}", known = languages::stemmer_names_joined())]
    UnknownStemmer(String),

    /// `min_length` of zero.
    #[error("minimum token length must be at least 1 (got 0)")]
    MinLengthZero,

    /// `min_length` greater than `max_length`.
    #[error(
        "minimum token length {min_length} is greater than maximum token length {max_length}: \
         lower the minimum or raise the maximum"
    )]
    MinLengthAboveMax {
        /// The minimum given.
        min_length: usize,
        /// The maximum given.
        max_length: usize,
    },
}

/// Names of the languages usable as `stemmer` (each also by its ISO 639-1
/// code), sorted; for help text.
pub fn known_stemmer_languages() -> Vec<&'static str> {
    STEMMER_LANGUAGES.iter().map(|(name, _, _)| *name).collect()
}

/// Normalises raw text the way the tokenizer does before segmentation:
/// NFKC, then U+2019 and U+02BC to ASCII `'`. Borrows when nothing changes.
pub fn normalize_text(text: &str) -> Cow<'_, str> {
    let composed: Cow<'_, str> = if text.is_ascii() || is_nfkc_quick(text.chars()) == IsNormalized::Yes {
        Cow::Borrowed(text)
    } else {
        Cow::Owned(text.nfkc().collect())
    };
    if composed.contains(TYPOGRAPHIC_APOSTROPHES) {
        Cow::Owned(composed.replace(TYPOGRAPHIC_APOSTROPHES, "'"))
    } else {
        composed
    }
}

/// Normalises one stopword so it compares equal to tokens: trims it, applies
/// [`normalize_text`], and lowercases it when `lowercase` is set.
pub(crate) fn normalize_word(word: &str, lowercase: bool) -> String {
    let normalized = normalize_text(word.trim());
    if lowercase {
        normalized.to_lowercase()
    } else {
        normalized.into_owned()
    }
}

/// A ready-to-use tokenizer built from settings: NFKC and apostrophe
/// normalisation, UAX #29 word segmentation, then the filter chain.
pub struct Tokenizer {
    settings: TokenizerSettings,
    chain: FilterChain,
    /// The stemmer, kept out of the chain so that the word it stems (the
    /// surface form a stem is shown as) can be seen too.
    stem: Option<StemFilter>,
}

impl std::fmt::Debug for Tokenizer {
    fn fmt(&self, formatter: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        formatter
            .debug_struct("Tokenizer")
            .field("settings", &self.settings)
            .field("chain", &self.chain)
            .field("stem", &self.stem)
            .finish()
    }
}

impl Tokenizer {
    /// Checks `settings` and builds the filter chain: lowercase (if set),
    /// drop numbers (if set), length bounds, stopwords (if any), stemming (if set).
    ///
    /// Fails if `min_length` is 0 or above `max_length`, or the stemmer
    /// language is unknown. Stopwords are normalised like tokens (NFKC,
    /// apostrophes, and lowercase when `lowercase` is set).
    pub fn new(settings: &TokenizerSettings) -> Result<Tokenizer, TokenizeError> {
        if settings.min_length == 0 {
            return Err(TokenizeError::MinLengthZero);
        }
        if settings.min_length > settings.max_length {
            return Err(TokenizeError::MinLengthAboveMax {
                min_length: settings.min_length,
                max_length: settings.max_length,
            });
        }
        let stem_algorithm = match &settings.stemmer {
            Some(name) => Some(
                languages::find_stemmer(name).ok_or_else(|| TokenizeError::UnknownStemmer(name.clone()))?,
            ),
            None => None,
        };
        let stopword_filter = StopwordFilter::new(
            settings
                .stopwords
                .iter()
                .map(|word| normalize_word(word, settings.lowercase))
                .filter(|word| !word.is_empty()),
        );
        let mut builder = FilterChainBuilder::new()
            .then_if(settings.lowercase, || LowercaseFilter)
            .then_if(settings.drop_numbers, || DropNonAlphabeticFilter)
            .then(LengthFilter {
                min_chars: settings.min_length,
                max_chars: settings.max_length,
            });
        if !stopword_filter.is_empty() {
            builder = builder.then(stopword_filter);
        }
        Ok(Tokenizer {
            settings: settings.clone(),
            chain: builder.build(),
            stem: stem_algorithm.map(StemFilter::new),
        })
    }

    /// The settings this tokenizer was built from, as given.
    pub fn settings(&self) -> &TokenizerSettings {
        &self.settings
    }

    /// The names of the filters in the chain, in order (for logs and help).
    pub fn filter_names(&self) -> Vec<&'static str> {
        let mut names = self.chain.filter_names();
        names.extend(self.stem.as_ref().map(|stem| stem.name()));
        names
    }

    /// Calls `f` with each kept token of `text`, in order.
    ///
    /// One buffer is reused for every token, so the common case allocates
    /// nothing per token (only lowercasing non-ASCII words with capitals and
    /// a stem that changes the word allocate).
    pub fn for_each_token(&self, text: &str, f: &mut dyn FnMut(&str)) {
        let normalized = normalize_text(text);
        let mut buffer = String::with_capacity(32);
        for word in normalized.unicode_words() {
            buffer.clear();
            buffer.push_str(word);
            if self.chain.apply(&mut buffer) && self.stem.as_ref().is_none_or(|stem| stem.apply(&mut buffer))
            {
                f(&buffer);
            }
        }
    }

    /// Calls `f(token, surface)` with each kept token of `text` and the word
    /// it was before stemming (lowercased, normalised: the form a stem is
    /// shown as); the two are the same without stemming.
    pub fn for_each_token_with_surface(&self, text: &str, f: &mut dyn FnMut(&str, &str)) {
        let normalized = normalize_text(text);
        let mut buffer = String::with_capacity(32);
        let mut surface = String::with_capacity(32);
        for word in normalized.unicode_words() {
            buffer.clear();
            buffer.push_str(word);
            if !self.chain.apply(&mut buffer) {
                continue;
            }
            match &self.stem {
                None => f(&buffer, &buffer),
                Some(stem) => {
                    surface.clear();
                    surface.push_str(&buffer);
                    if stem.apply(&mut buffer) {
                        f(&buffer, &surface);
                    }
                }
            }
        }
    }

    /// Whether tokens are stems (and so have surface forms worth keeping).
    pub fn stems(&self) -> bool {
        self.stem.is_some()
    }

    /// Collects the kept tokens of `text`.
    pub fn tokenize(&self, text: &str) -> Vec<String> {
        let mut out = Vec::new();
        self.for_each_token(text, &mut |t| out.push(t.to_string()));
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    use std::io::Write;

    /// Settings that keep every word of length 1..=40 (no stopwords, no stemming).
    fn keep_everything() -> TokenizerSettings {
        TokenizerSettings::default()
            .with_length_bounds(1, 40)
            .with_stopwords(Vec::new(), vec!["none".to_string()])
    }

    fn tokens(settings: &TokenizerSettings, text: &str) -> Vec<String> {
        match Tokenizer::new(settings) {
            Ok(tokenizer) => tokenizer.tokenize(text),
            Err(error) => panic!("settings rejected: {error}"),
        }
    }

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
    fn tokenizer_is_send_and_sync() {
        // Source: common practice (a tokenizer is shared across worker threads).
        fn assert_send_sync<T: Send + Sync>() {}
        assert_send_sync::<Tokenizer>();
    }

    #[test]
    fn precomposed_and_combining_accents_give_the_same_token() {
        // Source: Unicode UAX #15 (NFKC composes e + U+0301 into U+00E9).
        let settings = keep_everything();
        let precomposed = tokens(&settings, "caf\u{00E9} cr\u{00E8}me");
        let combining = tokens(&settings, "cafe\u{0301} cre\u{0300}me");
        assert_eq!(precomposed, ["caf\u{00E9}", "cr\u{00E8}me"]);
        assert_eq!(combining, precomposed);
    }

    #[test]
    fn each_cjk_ideograph_is_its_own_word() {
        // Source: Unicode UAX #29 word boundaries: Han ideographs have
        // Word_Break=Other, so no rule WB5-WB13 joins them and WB999 breaks
        // between every pair.
        let settings = keep_everything();
        assert_eq!(tokens(&settings, "東京大学"), ["東", "京", "大", "学"]);
        assert_eq!(tokens(&settings, "中文 text"), ["中", "文", "text"]);
    }

    #[test]
    fn emoji_are_dropped_even_when_numbers_are_kept() {
        // Source: Unicode UAX #29 (emoji form their own segments) and
        // UTS #51 (emoji are not Alphabetic or Numeric, so such segments hold no word).
        let settings = keep_everything().with_drop_numbers(false);
        assert_eq!(
            tokens(&settings, "I love 🍕 pizza 😀👍🏽 a lot"),
            ["i", "love", "pizza", "a", "lot"]
        );
        assert!(tokens(&settings, "🎉🎉🎉").is_empty());
    }

    #[test]
    fn ascii_and_typographic_apostrophes_give_the_same_single_token() {
        // Source: Unicode UAX #29 rules WB6/WB7 (ALetter × (MidLetter |
        // MidNumLet | Single_Quote) ALetter): U+0027 is Single_Quote and
        // U+2019 is MidNumLet, so "don't" stays one word.
        let settings = keep_everything();
        let ascii = tokens(&settings, "don't");
        assert_eq!(ascii, ["don't"]);
        assert_eq!(tokens(&settings, "don\u{2019}t"), ascii);
        assert_eq!(tokens(&settings, "don\u{02BC}t"), ascii);
    }

    #[test]
    fn hyphens_split_words() {
        // Source: Unicode UAX #29: U+002D HYPHEN-MINUS has Word_Break=Other,
        // so WB999 breaks on both sides of it.
        let settings = keep_everything();
        assert_eq!(tokens(&settings, "well-known"), ["well", "known"]);
    }

    #[test]
    fn nfkc_folds_fullwidth_letters_and_ligatures() {
        // Source: Unicode UAX #15 (compatibility decompositions: U+FF21..
        // FULLWIDTH LATIN CAPITAL LETTER A.. -> A.., U+FB01 LATIN SMALL LIGATURE FI -> fi).
        let settings = keep_everything();
        assert_eq!(tokens(&settings, "ＡＢＣ"), ["abc"]);
        assert_eq!(tokens(&settings, "\u{FB01}nd"), ["find"]);
        assert_eq!(normalize_text("\u{FB01}"), "fi");
    }

    #[test]
    fn pure_numbers_are_dropped_but_mixed_tokens_kept() {
        // Source: Unicode UAX #29 rules WB11/WB12 (Numeric (MidNum |
        // MidNumLet) × Numeric) keep "3.14" as one word; it has no
        // Alphabetic character (UAX #44), so the number filter drops it.
        let dropping = keep_everything();
        assert_eq!(tokens(&dropping, "2024 3.14 covid19"), ["covid19"]);
        let keeping = keep_everything().with_drop_numbers(false);
        assert_eq!(tokens(&keeping, "2024 3.14 covid19"), ["2024", "3.14", "covid19"]);
    }

    #[test]
    fn length_bounds_count_chars_not_bytes() {
        // Source: Unicode Standard ch. 3 (é U+00E9 is one code point, two
        // bytes in UTF-8): "été" has 3 chars and 5 bytes.
        assert_eq!("été".len(), 5);
        let exactly_three = keep_everything().with_length_bounds(3, 3);
        assert_eq!(tokens(&exactly_three, "été au lac ciel"), ["été", "lac"]);
        let at_least_four = keep_everything().with_length_bounds(4, 40);
        assert_eq!(tokens(&at_least_four, "été ciel"), ["ciel"]);
    }

    #[test]
    fn lowercasing_is_optional_and_full_unicode() {
        // Source: Unicode SpecialCasing.txt (Final_Sigma: word-final Σ -> ς).
        let settings = keep_everything();
        assert_eq!(tokens(&settings, "ΟΔΟΣ Apple"), ["οδος", "apple"]);
        let keep_case = keep_everything().with_lowercase(false);
        assert_eq!(tokens(&keep_case, "ΟΔΟΣ Apple"), ["ΟΔΟΣ", "Apple"]);
    }

    #[test]
    fn default_settings_remove_builtin_english_stopwords() {
        // Source: common practice (articles, conjunctions, pronouns and
        // contractions are stopwords; the default keeps 3..=40 chars).
        let settings = TokenizerSettings::default();
        assert_eq!(settings.stopword_sources, ["english"]);
        assert_eq!(
            tokens(&settings, "The cat and the hat don't sit with them on 42 mats"),
            ["cat", "hat", "sit", "mats"]
        );
    }

    #[test]
    fn french_stopword_from_the_crate_is_removed() {
        // Source: the stopwords-iso French list shipped by the stop-words
        // crate (checked here to hold "sur" and "est").
        let crate_list = stop_words::lookup("fr").expect("stop-words has French");
        assert!(crate_list.contains(&"sur") && crate_list.contains(&"est"));
        let (words, sources) = resolve_stopwords(&specs(&["fr"])).expect("fr resolves");
        assert_eq!(sources, ["french"]);
        let settings = keep_everything().with_stopwords(words, sources);
        let kept = tokens(&settings, "Le chat est sur la table");
        assert!(
            !kept.iter().any(|token| token == "sur" || token == "est"),
            "{kept:?}"
        );
        assert!(kept.iter().any(|token| token == "chat"), "{kept:?}");
        assert!(kept.iter().any(|token| token == "table"), "{kept:?}");
    }

    #[test]
    fn user_stopword_file_with_comments_and_blank_lines() {
        // Source: common practice (one word per line, '#' comments, blank lines ignored).
        let file = stopword_file(
            "# project stopwords\n\nAlpha\nbeta   # trailing comment\r\n  GAMMA\u{2019}S \n#delta\n"
                .as_bytes(),
        );
        let path = file.path().to_string_lossy().into_owned();
        let (words, sources) = resolve_stopwords(std::slice::from_ref(&path)).expect("file resolves");
        assert_eq!(words, ["alpha", "beta", "gamma's"]);
        assert_eq!(sources, [format!("file:{path}")]);
        let settings = keep_everything().with_stopwords(words, sources);
        assert_eq!(
            tokens(&settings, "alpha BETA gamma’s delta epsilon"),
            ["delta", "epsilon"]
        );
    }

    #[test]
    fn none_keeps_every_word() {
        // Source: common practice (no stopword list removes nothing).
        let (words, sources) = resolve_stopwords(&specs(&["None"])).expect("none resolves");
        assert!(words.is_empty());
        assert_eq!(sources, ["none"]);
        let settings = keep_everything().with_stopwords(words, sources);
        assert_eq!(
            tokens(&settings, "the cat and the hat"),
            ["the", "cat", "and", "the", "hat"]
        );
    }

    #[test]
    fn english_stemming_follows_snowball() {
        // Source: Snowball English stemmer definition (Step 1b removes "ing"
        // and undoubles "nn"; Step 1a removes plural "s"; "connection" ->
        // "connect" via Step 4 "ion").
        let settings = keep_everything().with_stemmer(Some("English"));
        assert_eq!(
            tokens(&settings, "running cats connection"),
            ["run", "cat", "connect"]
        );
        let tokenizer = Tokenizer::new(&settings).expect("valid settings");
        assert_eq!(
            tokenizer.filter_names(),
            ["lowercase", "drop-numbers", "length", "stem"]
        );
    }

    #[test]
    fn stopwords_are_checked_before_stemming() {
        // Source: common practice (stopword lists hold surface forms, so they
        // are matched before stemming); "running" -> "run" per Snowball English.
        let settings = keep_everything()
            .with_stopwords(vec!["run".to_string()], vec!["test".to_string()])
            .with_stemmer(Some("english"));
        assert_eq!(tokens(&settings, "run running"), ["run"]);
    }

    #[test]
    fn invalid_length_bounds_are_errors() {
        // Source: common practice (an empty range keeps nothing; length 0 is no word).
        let reversed = keep_everything().with_length_bounds(5, 3);
        let error = Tokenizer::new(&reversed).expect_err("min > max must fail");
        assert!(matches!(
            error,
            TokenizeError::MinLengthAboveMax {
                min_length: 5,
                max_length: 3
            }
        ));
        assert!(error.to_string().contains('5') && error.to_string().contains('3'));
        let zero = keep_everything().with_length_bounds(0, 3);
        assert!(matches!(Tokenizer::new(&zero), Err(TokenizeError::MinLengthZero)));
    }

    #[test]
    fn unknown_stemmer_error_lists_known_stemmers() {
        // Source: rust-stemmers Algorithm enum (Snowball languages, no Latin).
        let settings = keep_everything().with_stemmer(Some("latin"));
        let error = Tokenizer::new(&settings).expect_err("must fail");
        assert!(matches!(&error, TokenizeError::UnknownStemmer(name) if name == "latin"));
        let message = error.to_string();
        assert!(
            message.contains("english") && message.contains("french"),
            "{message}"
        );
    }

    #[test]
    fn stopwords_in_settings_are_normalised_like_tokens() {
        // Source: Unicode UAX #15 (fullwidth letters fold under NFKC) and
        // common practice (stopwords compare against normalised tokens).
        let settings = keep_everything().with_stopwords(vec!["ＴＨＥ".to_string()], vec!["test".to_string()]);
        assert_eq!(tokens(&settings, "The cat"), ["cat"]);
    }

    #[test]
    fn tokenizer_keeps_the_settings_it_was_built_from() {
        // Source: common practice (the exact settings are stored in corpus and model files).
        let settings = TokenizerSettings::default().with_stemmer(Some("english"));
        let tokenizer = Tokenizer::new(&settings).expect("valid settings");
        assert_eq!(tokenizer.settings(), &settings);
    }
}
