//! Names of the languages the tokenizer knows: which stopword lists can be
//! asked for by language name or ISO 639-1 code (English from this project's
//! own list, the others from the `stop-words` crate), and which Snowball
//! stemmers `rust-stemmers` offers.

use rust_stemmers::Algorithm;

/// Where a stopword language's words come from.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum StopwordOrigin {
    /// This project's own English list ([`super::english::ENGLISH_STOPWORDS`]).
    BuiltInEnglish,
    /// The `stop-words` crate's list under this ISO 639-1 code.
    StopWordsCrate(&'static str),
}

/// One stopword language: its lowercase English name, its ISO 639-1 code and
/// where its words come from.
#[derive(Clone, Copy, Debug)]
pub struct StopwordLanguage {
    /// Lowercase English name, e.g. `"french"`.
    pub name: &'static str,
    /// ISO 639-1 code, e.g. `"fr"`.
    pub code: &'static str,
    /// Where the words come from.
    pub origin: StopwordOrigin,
}

/// Builds a table row for a language whose list comes from the `stop-words` crate.
const fn from_crate(name: &'static str, code: &'static str) -> StopwordLanguage {
    StopwordLanguage {
        name,
        code,
        origin: StopwordOrigin::StopWordsCrate(code),
    }
}

/// Every stopword language, sorted by name. The crate rows are the languages
/// of the `stop-words` crate's default `iso` feature.
pub const STOPWORD_LANGUAGES: &[StopwordLanguage] = &[
    from_crate("afrikaans", "af"),
    from_crate("arabic", "ar"),
    from_crate("armenian", "hy"),
    from_crate("basque", "eu"),
    from_crate("bengali", "bn"),
    from_crate("breton", "br"),
    from_crate("bulgarian", "bg"),
    from_crate("catalan", "ca"),
    from_crate("chinese", "zh"),
    from_crate("croatian", "hr"),
    from_crate("czech", "cs"),
    from_crate("danish", "da"),
    from_crate("dutch", "nl"),
    StopwordLanguage {
        name: "english",
        code: "en",
        origin: StopwordOrigin::BuiltInEnglish,
    },
    from_crate("esperanto", "eo"),
    from_crate("estonian", "et"),
    from_crate("finnish", "fi"),
    from_crate("french", "fr"),
    from_crate("galician", "gl"),
    from_crate("german", "de"),
    from_crate("greek", "el"),
    from_crate("gujarati", "gu"),
    from_crate("hausa", "ha"),
    from_crate("hebrew", "he"),
    from_crate("hindi", "hi"),
    from_crate("hungarian", "hu"),
    from_crate("indonesian", "id"),
    from_crate("irish", "ga"),
    from_crate("italian", "it"),
    from_crate("japanese", "ja"),
    from_crate("korean", "ko"),
    from_crate("kurdish", "ku"),
    from_crate("latin", "la"),
    from_crate("latvian", "lv"),
    from_crate("lithuanian", "lt"),
    from_crate("malay", "ms"),
    from_crate("marathi", "mr"),
    from_crate("norwegian", "no"),
    from_crate("persian", "fa"),
    from_crate("polish", "pl"),
    from_crate("portuguese", "pt"),
    from_crate("romanian", "ro"),
    from_crate("russian", "ru"),
    from_crate("slovak", "sk"),
    from_crate("slovenian", "sl"),
    from_crate("somali", "so"),
    from_crate("sotho", "st"),
    from_crate("spanish", "es"),
    from_crate("swahili", "sw"),
    from_crate("swedish", "sv"),
    from_crate("tagalog", "tl"),
    from_crate("thai", "th"),
    from_crate("turkish", "tr"),
    from_crate("ukrainian", "uk"),
    from_crate("urdu", "ur"),
    from_crate("vietnamese", "vi"),
    from_crate("yoruba", "yo"),
    from_crate("zulu", "zu"),
];

/// Finds a stopword language by name or ISO 639-1 code, ignoring case and
/// surrounding whitespace.
pub fn find_stopword_language(name_or_code: &str) -> Option<&'static StopwordLanguage> {
    let wanted = name_or_code.trim().to_lowercase();
    STOPWORD_LANGUAGES
        .iter()
        .find(|language| language.name == wanted || language.code == wanted)
}

/// The Snowball stemmers of `rust-stemmers`: (lowercase name, ISO 639-1 code, algorithm).
pub const STEMMER_LANGUAGES: &[(&str, &str, Algorithm)] = &[
    ("arabic", "ar", Algorithm::Arabic),
    ("danish", "da", Algorithm::Danish),
    ("dutch", "nl", Algorithm::Dutch),
    ("english", "en", Algorithm::English),
    ("finnish", "fi", Algorithm::Finnish),
    ("french", "fr", Algorithm::French),
    ("german", "de", Algorithm::German),
    ("greek", "el", Algorithm::Greek),
    ("hungarian", "hu", Algorithm::Hungarian),
    ("italian", "it", Algorithm::Italian),
    ("norwegian", "no", Algorithm::Norwegian),
    ("portuguese", "pt", Algorithm::Portuguese),
    ("romanian", "ro", Algorithm::Romanian),
    ("russian", "ru", Algorithm::Russian),
    ("spanish", "es", Algorithm::Spanish),
    ("swedish", "sv", Algorithm::Swedish),
    ("tamil", "ta", Algorithm::Tamil),
    ("turkish", "tr", Algorithm::Turkish),
];

/// Finds a Snowball stemmer by language name or ISO 639-1 code, ignoring case
/// and surrounding whitespace.
pub fn find_stemmer(name_or_code: &str) -> Option<Algorithm> {
    let wanted = name_or_code.trim().to_lowercase();
    STEMMER_LANGUAGES
        .iter()
        .find(|(name, code, _)| *name == wanted || *code == wanted)
        .map(|(_, _, algorithm)| *algorithm)
}

/// The stemmer language names, comma-separated, for error and help text.
pub fn stemmer_names_joined() -> String {
    STEMMER_LANGUAGES
        .iter()
        .map(|(name, _, _)| *name)
        .collect::<Vec<_>>()
        .join(", ")
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_crate_language_in_the_table_is_offered_by_the_crate() {
        // Source: the stop-words crate's `available_languages()` for its
        // default `iso` feature (stopwords-iso collection).
        let available = stop_words::available_languages();
        for language in STOPWORD_LANGUAGES {
            assert!(
                available.contains(&language.code),
                "{} ({}) is not offered by stop-words",
                language.name,
                language.code
            );
            if let StopwordOrigin::StopWordsCrate(code) = language.origin {
                let words = stop_words::lookup(code);
                assert!(words.is_some_and(|list| !list.is_empty()), "no words for {code}");
            }
        }
    }

    #[test]
    fn every_language_the_crate_offers_is_in_the_table() {
        // Source: the stop-words crate's `available_languages()`.
        for code in stop_words::available_languages() {
            assert!(
                STOPWORD_LANGUAGES.iter().any(|language| language.code == *code),
                "stop-words offers `{code}` but the table does not map it"
            );
        }
    }

    #[test]
    fn table_is_sorted_by_name_with_unique_codes() {
        // Source: common practice (sorted help text, one code per language).
        for pair in STOPWORD_LANGUAGES.windows(2) {
            assert!(pair[0].name < pair[1].name, "{} / {}", pair[0].name, pair[1].name);
        }
        let mut codes: Vec<_> = STOPWORD_LANGUAGES.iter().map(|l| l.code).collect();
        codes.sort_unstable();
        codes.dedup();
        assert_eq!(codes.len(), STOPWORD_LANGUAGES.len());
    }

    #[test]
    fn lookups_accept_names_and_codes_in_any_case() {
        // Source: ISO 639-1 (fr = French, de = German).
        assert_eq!(find_stopword_language("FR").map(|l| l.name), Some("french"));
        assert_eq!(find_stopword_language(" German ").map(|l| l.code), Some("de"));
        assert!(find_stopword_language("elvish").is_none());
        assert_eq!(find_stemmer("English"), Some(Algorithm::English));
        assert_eq!(find_stemmer("de"), Some(Algorithm::German));
        assert_eq!(find_stemmer("latin"), None);
    }
}
